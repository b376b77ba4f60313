"""The spec's ``data:`` keys for sources other than a plain CSV/xlsx file: checks and build.

Kept beside :mod:`verify.spec` so that the spec loader changes only by two calls:
:func:`check` (problems, each with its key path) and :func:`build` (the resolved values).

Keys:

``encoding``
    Text files: the character encoding (any name Python knows, e.g. ``windows-1252``).
``formula_cells``
    xlsx: ``error`` (default) or ``saved-results``.
``filter``
    Parquet: rows to read, a list of ``[column, operator, value]`` (all must hold); operators
    ``==``, ``!=``, ``<``, ``<=``, ``>``, ``>=``, ``in``, ``not in`` (a list value).
``source: sql`` with ``url`` or ``url_env``, ``query``, ``params``
    A SQL query through SQLAlchemy (``sqlite:///`` URLs through Python's own sqlite3).
"""

from __future__ import annotations

import codecs
import os
import re
from pathlib import Path
from typing import Any

TEXT_SUFFIXES = (".csv", ".tsv")
FILTER_OPS = ("==", "!=", "<", "<=", ">", ">=", "in", "not in")
FORMULA_POLICIES = ("error", "saved-results")
SQL_ONLY = ("url", "url_env", "query", "params")
FILE_ONLY = ("file", "sheet", "encoding", "filter", "formula_cells")
_PASSWORD_IN_URL = re.compile(r"^[A-Za-z][\w+.-]*://[^/@:]*:[^/@]*@")
_ENV_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


def check(data: dict, add, ok) -> None:
    """Add a problem through ``add(path, message, key=...)`` for each misuse of these keys.

    ``ok(mapping, key, path)`` tells whether a key is present and passed the schema.
    """
    source = data.get("source", "file")
    if source == "dataframe":  # the Python API hands the rows over
        for k in FILE_ONLY + SQL_ONLY:
            if k in data:
                add(f"data.{k}", f"data.{k} does not apply with source: dataframe (the rows "
                    "are passed to verify.evaluate)", key=True)
        return
    if source == "sql":
        for k in FILE_ONLY:
            if k in data:
                add(f"data.{k}", f"data.{k} is for files; with source: sql the rows come from "
                    "data.query", key=True)
        if ("url" in data) == ("url_env" in data):
            add("data", "source: sql needs exactly one of data.url (a URL without password, "
                "such as sqlite:///lots.db) and data.url_env (the name of an environment "
                "variable holding the URL)", key=True)
        if "query" not in data:
            add("data", "source: sql needs data.query (a SELECT statement)", key=True)
        if ok(data, "url", "data.url"):
            if _PASSWORD_IN_URL.match(data["url"]):
                add("data.url", "the URL holds a password: credentials belong in the "
                    "environment, never in a spec; put the URL in an environment variable and "
                    "name it with data.url_env")
            elif "://" not in data["url"]:
                add("data.url", f"{data['url']!r} is not a database URL (such as "
                    "sqlite:///lots.db or postgresql+psycopg://host/db)")
        if ok(data, "url_env", "data.url_env") and not _ENV_NAME.match(data["url_env"]):
            add("data.url_env", f"{data['url_env']!r} is not an environment variable name "
                "(letters, digits and _): give the variable's name, not the URL")
        if ok(data, "query", "data.query"):
            q = data["query"].strip().rstrip(";").strip()
            if not re.match(r"(?is)^(select|with)\b", q):
                add("data.query", "must be a SELECT statement (or WITH ... SELECT): verify only "
                    "reads")
            elif ";" in q:
                add("data.query", "holds more than one statement: give one SELECT")
        return
    for k in SQL_ONLY:
        if k in data:
            add(f"data.{k}", f"data.{k} is for SQL sources: add source: sql, or remove it",
                key=True)
    if "file" not in data:
        add("data", "missing key 'file' in `data`: the data file (.csv, .tsv, .xlsx or "
            ".parquet), or source: sql with a query", key=True)
        return
    if not ok(data, "file", "data.file"):
        return
    suffix = Path(data["file"]).suffix.lower()
    if "encoding" in data and suffix not in TEXT_SUFFIXES:
        add("data.encoding", f"applies to .csv and .tsv files only; {data['file']!r} is "
            f"{suffix}", key=True)
    elif ok(data, "encoding", "data.encoding"):
        try:
            codecs.lookup(data["encoding"])
        except LookupError:
            add("data.encoding", f"{data['encoding']!r} is not an encoding Python knows (such "
                "as utf-8, windows-1252, latin-1)")
    if "formula_cells" in data and suffix != ".xlsx":
        add("data.formula_cells", f"applies to .xlsx files only; {data['file']!r} is {suffix}",
            key=True)
    if "filter" in data and suffix != ".parquet":
        add("data.filter", f"applies to .parquet files only; {data['file']!r} is {suffix}",
            key=True)
    elif ok(data, "filter", "data.filter"):
        for i, f in enumerate(data["filter"]):
            if not isinstance(f[0], str) or not f[0]:
                add(f"data.filter[{i}]", "the first item must be a column name")
            elif f[1] not in FILTER_OPS:
                add(f"data.filter[{i}]", f"{f[1]!r} is not an operator: use one of "
                    + ", ".join(FILTER_OPS))
            elif f[1] in ("in", "not in") and not isinstance(f[2], list):
                add(f"data.filter[{i}]", f"operator {f[1]!r} needs a list of values")
            elif f[1] not in ("in", "not in") and isinstance(f[2], list):
                add(f"data.filter[{i}]", f"operator {f[1]!r} compares with one value, not a list")


def build(spec_path: Path, d: dict, rec) -> dict[str, Any]:
    """The DataSpec fields of these keys, recording each resolved value through ``rec``."""
    out: dict[str, Any] = {}
    source = d.get("source", "file")
    out["source"] = source
    if source == "dataframe":
        rec("data.source", "dataframe")
        return out
    if source == "sql":
        rec("data.source", "sql")
        url, env = d.get("url"), d.get("url_env")
        if url is not None:
            rec("data.url", url)
        else:
            rec("data.url_env", env)
        rec("data.query", d["query"])
        params = tuple(sorted((str(k), v) for k, v in (d.get("params") or {}).items()))
        if params:
            rec("data.params", {k: v for k, v in params})
        out.update(url=url, url_env=env, query=d["query"], params=params)
        return out
    suffix = Path(d["file"]).suffix.lower()
    if suffix in TEXT_SUFFIXES:
        enc = d.get("encoding")
        rec("data.encoding", enc if enc else "(detected: UTF-8, Windows-1252, else Latin-1)",
            default=enc is None)
        out["encoding"] = codecs.lookup(enc).name if enc else None
    if suffix == ".xlsx":
        policy = d.get("formula_cells", "error")
        rec("data.formula_cells", policy, default="formula_cells" not in d)
        out["formula_cells"] = policy
    if suffix == ".parquet" and d.get("filter"):
        out["filters"] = tuple((str(c), op, tuple(v) if isinstance(v, list) else v)
                               for c, op, v in d["filter"])
        rec("data.filter", [list(f) for f in d["filter"]])
    return out


def sql_url_path(spec_path: Path, url: str | None) -> Path | None:
    """The database file of a ``sqlite:///`` URL, resolved against the spec's folder."""
    if not url or not url.lower().startswith("sqlite:///"):
        return None
    rest = url[len("sqlite:///"):].split("?", 1)[0]
    return Path(os.path.abspath(spec_path.parent / rest))
