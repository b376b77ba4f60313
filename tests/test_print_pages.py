"""Pages that print: every workbook kind rendered through LibreOffice to PDF.

Renders the three demo run workbooks, a plan workbook and a nightly digest with
``soffice --headless --convert-to pdf`` (its own profile) and reads the PDF back with poppler
(``pdfinfo``, ``pdftotext``): LibreOffice is the outside judge of where pages end. Checks:

* page counts stay within a budget per workbook (a sheet shrunk to one unreadable page or
  sprawling over slivers shows up here), and the decision page is one page;
* no chart crosses a page end: on the paper, each chart's title and its horizontal axis title
  are on the same page; on the sheet, no manual page break falls inside a chart's rows;
* the digest's table repeats its header on every page and prints its labels with its values.

Without LibreOffice or poppler the tests skip loudly: the print layout is then NOT checked.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import zipfile
from pathlib import Path

import openpyxl
import pytest

from verify.cli import main
from verify.report import layout as L

pytestmark = pytest.mark.slow
ROOT = Path(__file__).resolve().parents[1]
EMU_PER_PT = 12700


@pytest.fixture(scope="module")
def tools():
    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None or not shutil.which("pdftotext") or not shutil.which("pdfinfo"):
        pytest.skip(
            "LibreOffice (soffice) or poppler-utils (pdftotext, pdfinfo) is not installed: the "
            "printed pages were NOT checked. Install libreoffice-calc-nogui and poppler-utils."
        )
    return exe


@pytest.fixture(scope="module")
def books(tmp_path_factory, tools):
    """The demo run workbooks, a plan workbook and a digest, with their PDFs."""
    base = tmp_path_factory.mktemp("print")
    shutil.copytree(ROOT / "specs", base / "specs")
    shutil.copytree(ROOT / "sample_lots", base / "sample_lots")
    out = base / "reports"
    main(["run", str(base / "specs"), "--out", str(out)])
    from verify import cli_plan

    assert cli_plan.main([str(base / "specs" / "bushing-supplier.yaml"), "--out", str(out)]) == 0
    from verify.digest import DigestRow, write_digest

    rows = [
        DigestRow(f"spec-{k:02d}", f"specs/spec-{k:02d}.yaml", "RUN", decision="PASS",
                  previous_decision="PENDING", standing="MONITORING",
                  record="PASS on 2025-01-02, run r1", drift=k % 7 == 0,
                  drift_note="overall PASS -> HOLD" if k % 7 == 0 else None,
                  new_lots=("N3", "N4"), workbook=f"reports/nightly/spec-{k:02d}/x.xlsx")
        for k in range(60)
    ]
    write_digest(out / "digest.xlsx", rows, run=[("run", "r2"), ("started", "s"),
                                                 ("finished", "f")])
    files = sorted(out.glob("*.xlsx"))
    assert set(BUDGET) <= {f.stem for f in files}  # (other demo specs are rendered too)
    profile = base / "lo-profile"
    cmd = [tools, f"-env:UserInstallation={profile.as_uri()}", "--headless", "--norestore",
           "--convert-to", "pdf", "--outdir", str(base / "pdf"), *map(str, files)]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=900)
    assert done.returncode == 0, done.stderr
    pdfs = {f.stem: base / "pdf" / f"{f.stem}.pdf" for f in files}
    for stem, pdf in pdfs.items():
        assert pdf.is_file(), f"LibreOffice wrote no PDF for {stem}: {done.stdout} {done.stderr}"
    return {f.stem: (f, pdfs[f.stem]) for f in files}


def _pages(pdf: Path) -> list[str]:
    text = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True,
                          text=True, check=True).stdout
    pages = text.split("\f")
    return pages[:-1] if pages and not pages[-1].strip() else pages


def _page_count(pdf: Path) -> int:
    info = subprocess.run(["pdfinfo", str(pdf)], capture_output=True, text=True,
                          check=True).stdout
    return int(re.search(r"^Pages:\s+(\d+)", info, re.M).group(1))


def _sheet_of(page: str) -> str:
    """The sheet a page belongs to, from its footer ("<sheet>: ... page N of M")."""
    for line in reversed(page.splitlines()):
        if re.search(r"page \d+ of \d+", line):
            return line.strip().split(":")[0]
    return ""


# budgets: pages per workbook kind, a bound against a sheet sprawling over slivers (LibreOffice
# 7.4 without the Calibri metrics rendered 21 to 31 for the demo run workbooks, 6 for the plan;
# the digest of 60 specs prints its table on 2 pages and every field of every spec on about 20)
BUDGET = {"bushing-supplier": 38, "filler-paired": 38, "housing-resin": 30,
          "bushing-supplier-plan": 8, "digest": 26}


@pytest.mark.parametrize("stem", sorted(BUDGET))
def test_page_counts_stay_within_budget(books, stem):
    _xlsx, pdf = books[stem]
    n = _page_count(pdf)
    pages = _pages(pdf)
    assert len(pages) == n  # pdftotext and pdfinfo agree on the pages
    assert 1 <= n <= BUDGET[stem], f"{stem}: {n} pages"
    # every page carries a footer naming its sheet and its page
    assert all(re.search(r"page \d+ of \d+", p) for p in pages), stem


@pytest.mark.parametrize("stem", ["bushing-supplier", "filler-paired", "housing-resin"])
def test_decision_page_is_one_page_with_the_sign_off(books, stem):
    _xlsx, pdf = books[stem]
    pages = _pages(pdf)
    decision = [p for p in pages if _sheet_of(p) == L.SUMMARY_SHEET]
    assert len(decision) == 1
    text = decision[0]
    assert "Overall decision" in text and "Change approver" in text
    assert "verify approves nothing" in " ".join(text.split())


def _charts_by_sheet(xlsx: Path) -> dict[str, list[dict]]:
    """Each sheet's charts: title, horizontal axis title, anchor row and height in points."""
    wb = openpyxl.load_workbook(xlsx)
    out = {}
    with zipfile.ZipFile(xlsx) as z:
        names = set(z.namelist())
    for ws in wb.worksheets:
        charts = []
        for ch in ws._charts:
            title = "".join(r.t for p in ch.title.tx.rich.p for r in (p.r or []))
            x_title = None
            if ch.x_axis.title is not None:
                x_title = "".join(r.t for p in ch.x_axis.title.tx.rich.p for r in (p.r or []))
            anchor = ch.anchor._from
            height_emu = ch.anchor.ext.height  # the drawing's extent, as written
            charts.append({"title": title, "x_title": x_title, "row": anchor.row + 1,
                           "height_pt": height_emu / EMU_PER_PT})
        if charts:
            out[ws.title] = (ws, charts)
    assert names  # the file is a zip
    return out


def _squash(text: str) -> str:
    return " ".join(text.split())


@pytest.mark.parametrize("stem", ["bushing-supplier", "filler-paired", "housing-resin",
                                  "bushing-supplier-plan"])
def test_no_chart_crosses_a_page_end(books, stem):
    xlsx, pdf = books[stem]
    pages = [_squash(p) for p in _pages(pdf)]
    seen = 0
    for sheet, (ws, charts) in _charts_by_sheet(xlsx).items():
        breaks = sorted(b.id for b in ws.row_breaks.brk)
        for ch in charts:
            # on the sheet: no manual break inside the rows the chart covers
            top, need, rows = ch["row"], ch["height_pt"], 0
            while need > 0:
                need -= ws.row_dimensions[top + rows].height or 15.0
                rows += 1
            inside = [b for b in breaks if top <= b < top + rows - 1]
            assert not inside, f"{sheet}: chart {ch['title']!r} spans a page break"
            # on paper: the title (top of the chart) and the axis title (its foot) share a page
            title = _squash(ch["title"])[:40]
            on = [i for i, p in enumerate(pages) if title in p]
            assert on, f"{stem}: chart {ch['title']!r} not found on any page"
            if ch["x_title"]:
                axis = _squash(ch["x_title"])[:25]
                assert any(axis in pages[i] for i in on), (
                    f"{stem}: chart {ch['title']!r} and its axis title {axis!r} are on "
                    "different pages")
            seen += 1
    assert seen >= 3


def test_digest_repeats_its_header_and_keeps_labels_with_values(books):
    _xlsx, pdf = books["digest"]
    pages = _pages(pdf)
    table = [p for p in pages if _sheet_of(p) == "Digest"]
    assert table and all("Spec" in p and "Decision" in p for p in table)
    run = [p for p in pages if _sheet_of(p) == "Run"]
    assert len(run) == 1 and "finished" in run[0] and "Exit status" in run[0]
    by_spec = " ".join(_squash(p) for p in pages if _sheet_of(p) == "By spec")
    assert "spec-59" in by_spec and "Decision of record PASS on 2025-01-02" in by_spec


def test_recheck_and_audit_print_as_tables(books):
    xlsx, pdf = books["filler-paired"]
    pages = _pages(pdf)
    recheck = [p for p in pages if _sheet_of(p) == L.RECHECK_SHEET]
    assert recheck and all("Quantity" in p and "Agrees" in p for p in recheck[1:])
    audit = [_squash(p) for p in pages if _sheet_of(p) == L.AUDIT_SHEET]
    assert audit and "verify approves nothing" in audit[0]
    wb = openpyxl.load_workbook(xlsx)
    assert wb[L.RECHECK_SHEET].print_options.gridLines is True
