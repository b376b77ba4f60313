"""The Python API for notebooks and scripts: specs from files or dicts, measurements from files,
databases or DataFrames, and one call that evaluates.

>>> import verify
>>> ev = verify.evaluate("specs/bushing-supplier.yaml")  # doctest: +SKIP
>>> ev.decision, ev.to_frame().shape  # doctest: +SKIP
('PASS', (12, 17))

The results support, and never replace, the engineering and quality review and sign-off.
"""

from __future__ import annotations

import dataclasses
import os
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd

    from .model import Evaluation, Measurements
    from .spec_model import Spec

FRAME_LABEL = "<DataFrame>"


def load_spec(source: str | os.PathLike | dict, *, base: str | os.PathLike | None = None,
              name: str = "spec") -> Spec:
    """A validated spec from a YAML file or from a dict with the same keys.

    Parameters
    ----------
    source
        A spec file's path, or a dict laid out like a spec file (``format``, ``title``,
        ``data``, ``characteristics``, ...). A dict's ``data`` may leave out ``file``: the
        measurements are then passed to :func:`evaluate` as a DataFrame.
    base
        For a dict: the folder that ``data.file`` is relative to (default: the working folder).
    name
        For a dict: the spec's name (the stem of the reports it would write).

    Raises
    ------
    SpecError
        Every problem of the spec, each naming its key path (and line, for a file).

    Examples
    --------
    >>> spec = load_spec({"format": "verify/1", "title": "demo",
    ...                   "data": {"lot": "lot", "process": "line", "old": "A", "new": "B"},
    ...                   "characteristics": [{"name": "x", "unit": "mm"}]})
    >>> spec.data.source
    'dataframe'
    """
    from .spec import load_spec as _load

    if isinstance(source, dict):
        import yaml

        doc = dict(source)
        data = doc.get("data")
        if isinstance(data, dict) and "file" not in data and "source" not in data:
            doc["data"] = {"source": "dataframe", **data}
        text = yaml.safe_dump(doc, sort_keys=False, allow_unicode=True)
        folder = Path(base) if base is not None else Path.cwd()
        return _load(folder / f"{name}.yaml", text=text)
    return _load(source)


def load_measurements(spec: Spec | str | os.PathLike | dict,
                      frame: pd.DataFrame | None = None) -> Measurements:
    """The tidy measurements of a spec: from its data source, or from ``frame``.

    ``frame`` holds the same table a data file would (the columns the spec names, one row per
    part or per measurement); rows are counted as in a CSV export of the frame: the header is
    row 1, the frame's first row is row 2.
    """
    from .data import load_measurements as _from_source

    spec = _spec(spec)
    if frame is None:
        return _from_source(spec)
    from .data.load import _file_info
    from .data.tidy import _Tidy
    from .model import Measurements
    from .sources.frame import read_frame

    sheet, raw = read_frame(frame)
    table, notes, unassigned = _Tidy(spec, sheet, FRAME_LABEL).run()
    info = _file_info(spec, table, sheet, raw)
    info = dataclasses.replace(info, path=FRAME_LABEL, resolved_path=FRAME_LABEL)
    return Measurements(table=table, files=(info,), unassigned_lots=unassigned,
                        notes=tuple(sheet.notes + notes))


def evaluate(spec: Spec | str | os.PathLike | dict, measurements: Any = None, *,
             final: bool = False) -> Evaluation:
    """Evaluate a spec: load its data (or take ``measurements``), run every check, decide.

    Parameters
    ----------
    spec
        A spec from :func:`load_spec`, a spec file's path, or a dict (see :func:`load_spec`).
    measurements
        None (read the spec's data source), a :class:`~verify.model.Measurements`, or a
        pandas DataFrame laid out like the data file.
    final
        The trial is complete: a shortfall against ``min_n`` no longer gives PENDING.

    Returns
    -------
    Evaluation
        ``decision``, ``characteristics`` and their checks; ``to_frame()`` gives one row per
        check. :func:`verify.write_workbook` writes the workbook.

    Examples
    --------
    >>> import pandas as pd
    >>> frame = pd.DataFrame({"lot": ["L1"] * 4 + ["L2"] * 4, "line": ["A"] * 4 + ["B"] * 4,
    ...                       "x": [10.0, 10.1, 9.9, 10.0, 10.2, 10.1, 10.0, 10.1]})
    >>> ev = evaluate({"format": "verify/1", "title": "demo",
    ...                "data": {"lot": "lot", "process": "line", "old": "A", "new": "B"},
    ...                "characteristics": [{"name": "x", "unit": "mm"}]}, frame)
    >>> ev.decision in ("PASS", "HOLD", "PENDING")
    True
    """
    import pandas as pd

    from .audit import run_info, utc_now
    from .evaluate import evaluate as _evaluate
    from .model import Measurements

    started = utc_now()
    spec = _spec(spec)
    if measurements is None or isinstance(measurements, pd.DataFrame):
        measurements = load_measurements(spec, measurements)
    elif not isinstance(measurements, Measurements):
        raise TypeError("measurements must be None, a pandas DataFrame or a Measurements, not "
                        f"{type(measurements).__name__}")
    run = run_info(spec, measurements, command="python: verify.evaluate", started=started)
    return _evaluate(spec, measurements, final=final, run=run)


def _spec(spec) -> Spec:
    from .spec_model import Spec

    return spec if isinstance(spec, Spec) else load_spec(spec)
