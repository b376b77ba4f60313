"""What the commands print on stdout: text lines, nothing (``--quiet``), or JSON lines
(``--json``, one object per spec), and a quiet end when the reader closes the pipe.

``verify check specs/ | head -2`` closes the pipe after two lines: the command then finishes
its work without printing and exits with its own status, instead of failing on the closed pipe.
"""

from __future__ import annotations

import json
import os
import sys

TEXT, QUIET, JSON = "text", "quiet", "json"
_state = {"mode": TEXT, "closed": False}


def set_mode(*, quiet: bool = False, json_lines: bool = False) -> None:
    """Choose the output of this process's command (``--json`` wins over ``--quiet``)."""
    _state["mode"] = JSON if json_lines else QUIET if quiet else TEXT


def mode() -> str:
    return _state["mode"]


def say(text: str | None, record: dict | None = None) -> None:
    """Print ``text`` (text mode) or ``record`` as one JSON line (JSON mode); nothing when quiet.

    A line of text without a record is not printed in JSON mode: stdout then holds JSON only.
    """
    m = _state["mode"]
    if m == QUIET or _state["closed"]:
        return
    if m == JSON:
        if record is None:
            return
        line = json.dumps(record, ensure_ascii=False, sort_keys=False, default=str)
    else:
        if text is None:
            return
        line = text
    try:
        print(line)
    except BrokenPipeError:
        pipe_closed()


def write(text: str) -> None:
    """Write ``text`` as it is (a schema, a script): not when quiet."""
    if _state["mode"] == QUIET or _state["closed"]:
        return
    try:
        sys.stdout.write(text)
    except BrokenPipeError:
        pipe_closed()


def flush() -> None:
    """Flush stdout; a reader that has gone away is no error."""
    if _state["closed"]:
        return
    try:
        sys.stdout.flush()
    except BrokenPipeError:
        pipe_closed()
    except (OSError, ValueError):
        pass


def pipe_closed() -> None:
    """The reader closed stdout: point it at the null device so that nothing more fails,
    Python's own flush at exit included (as the Python documentation on SIGPIPE advises)."""
    _state["closed"] = True
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError):
        pass
