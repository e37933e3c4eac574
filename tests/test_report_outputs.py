"""The report a client receives: the PDF (design and comparison), the template's title
block, the workbook and its bill of quantities, the rounded CSVs and option colours.

Sources of the facts checked: ISO 216 (A4 is 210 mm x 297 mm = 595.28 pt x 841.89 pt);
ANSI/ASME Y14.1 (US letter 8.5 in x 11 in = 612 pt x 792 pt; 1 pt = 1/72 in, PDF 1.7,
ISO 32000-1 section 8.3.2.3); pipes are bought in whole standard lengths and a bill of
quantities prices quantity x rate (common practice, no source). The PDF is read with
pypdf and the workbook with openpyxl, both from the registry.
"""

from __future__ import annotations

import hashlib
import math
import os
import re
from html.parser import HTMLParser
from pathlib import Path

import openpyxl
import pandas as pd
import pytest

import optimiser
from optimiser.analysis.appurtenances import schedule
from optimiser.cli import app
from optimiser.reports.html import render_report
from optimiser.reports.pdf import find_browser

pypdf = pytest.importorskip("pypdf")

QUANTITIES = {"quantities": {"pipe_length_m": 12.0, "air_valve_each": 1500.0,
                             "washout_each": 900.0}}


def _need_browser() -> None:
    if find_browser() is None:
        if os.environ.get("CI"):
            pytest.fail("chromium is missing in CI (.ci/run should install it)")
        pytest.skip("chromium not installed")


class _Rows(HTMLParser):
    """Text of every body row of every table of a page (cells in order)."""

    def __init__(self) -> None:
        super().__init__()
        self.rows: list[list[str]] = []
        self._cell: list[str] | None = None
        self._in_body = False

    def handle_starttag(self, tag, attrs):
        if tag == "tbody":
            self._in_body = True
        elif tag == "tr" and self._in_body:
            self.rows.append([])
        elif tag == "td" and self._in_body:
            self._cell = []

    def handle_endtag(self, tag):
        if tag == "tbody":
            self._in_body = False
        elif tag == "td" and self._cell is not None:
            self.rows[-1].append(" ".join("".join(self._cell).split()))
            self._cell = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)


def _pages(pdf: Path) -> list[str]:
    reader = pypdf.PdfReader(pdf)
    return [" ".join(page.extract_text().split()) for page in reader.pages]


def _check_pdf(pdf: Path, page_html: str, first_page_words: list[str]) -> None:
    pages = _pages(pdf)
    assert len(pages) >= 2
    for number, text in enumerate(pages, start=1):
        assert f"page {number} of {len(pages)}" in text
    for word in first_page_words:
        assert word in pages[0], word
    parser = _Rows()
    parser.feed(page_html)
    rows = [[c for c in row if c] for row in parser.rows]
    assert len(rows) > 20
    for row in rows:  # every row whole on one page: all of its cells on the same page
        assert any(all(cell in text for cell in row) for text in pages), row


def test_design_pdf_has_title_block_page_numbers_and_whole_rows(runner, study_files,
                                                                tmp_path):
    _need_browser()
    out = tmp_path / "out"
    done = runner.invoke(app, ["design", str(study_files.study), "--out", str(out)])
    assert done.exit_code == 0, done.output
    pdf = out / "report.pdf"
    width, height = (float(v) for v in pypdf.PdfReader(pdf).pages[0].mediabox[2:])
    # Chromium rounds the paper to whole device pixels: within 1 pt (0.35 mm).
    assert (width, height) == pytest.approx((595.28, 841.89), abs=1.0)  # A4
    digest = hashlib.sha256(study_files.study.read_bytes()).hexdigest()
    # report.html holds the same tables as the printed page (only the layout differs).
    _check_pdf(pdf, (out / "report.html").read_text(encoding="utf-8"),
               ["Invented test main", "prepared by", "checked by", "approved by", digest,
                optimiser.__version__, "licensed engineer", "Cautions"])


def test_letter_paper_and_comparison_pdf(runner, make_study, tmp_path):
    _need_browser()
    first = make_study(folder="route-a")
    second = make_study(folder="route-b", study={"catalogue": {"file": "catalogue.csv",
                                                               "materials": ["PE"]}})
    out = tmp_path / "out"
    done = runner.invoke(app, ["compare", str(first.study), str(second.study), "--out",
                               str(out), "--paper", "letter"])
    assert done.exit_code == 0, done.output
    pdf = out / "comparison.pdf"
    width, height = (float(v) for v in pypdf.PdfReader(pdf).pages[0].mediabox[2:])
    assert (width, height) == pytest.approx((612.0, 792.0), abs=1.0)  # US letter
    digests = [hashlib.sha256(p.study.read_bytes()).hexdigest() for p in (first, second)]
    _check_pdf(pdf, (out / "comparison.html").read_text(encoding="utf-8"),
               ["route-a", "route-b", *digests, "approved by", "licensed engineer"])
    assert (out / "route-b" / "report.pdf").is_file()


def test_without_a_browser_the_html_is_written_and_one_line_says_why(
        runner, study_files, tmp_path, monkeypatch):
    monkeypatch.setenv("OPTIMISER_CHROMIUM", str(tmp_path / "no-such-browser"))
    out = tmp_path / "out"
    done = runner.invoke(app, ["design", str(study_files.study), "--out", str(out)])
    assert done.exit_code == 0, done.output
    assert "Traceback" not in done.output
    lines = [line for line in done.output.splitlines() if "report.pdf not written" in line]
    assert len(lines) == 1 and "chromium" in lines[0].lower()
    assert (out / "report.html").is_file() and not (out / "report.pdf").exists()


def test_bad_paper_is_exit_2(runner, study_files, tmp_path):
    done = runner.invoke(app, ["design", str(study_files.study), "--out",
                               str(tmp_path / "out"), "--paper", "a3"])
    assert done.exit_code == 2
    assert "Traceback" not in done.output and not (tmp_path / "out").exists()


def test_title_block_comes_from_the_template(study_files):
    study = optimiser.load_study(study_files.study)
    result = optimiser.check_design(study, optimiser.load_design(study_files.design, study))
    page = render_report(result, schedule(result), option="route </script> & more")
    block = page.split('<table class="titleblock">', 1)[1].split("</table>", 1)[0]
    digest = hashlib.sha256(study_files.study.read_bytes()).hexdigest()
    for text in ("Invented test main", digest, str(study_files.study),
                 optimiser.__version__, "route &lt;/script&gt; &amp; more"):
        assert text in block, text
    for role in ("prepared by", "checked by", "approved by"):  # left blank to sign
        assert re.search(rf"<th>{role}</th><td class=\"sign\"></td>", block), role
    # The cautions are on page one, right after the title block.
    assert "licensed engineer" in page.split("<h2>", 1)[0]
    # One copy of plotly.js however many charts.
    assert page.count("Copyright (c) ") <= 2 and page.count("<script") == 2
    # Numbers as an engineer writes them: thousands separators, gap as a percentage.
    assert re.search(r"<td class=\"\">\d{1,3}(,\d{3})+</td>", page)


def test_workbook_formats_frozen_headers_and_bill(runner, make_study, tmp_path):
    files = make_study(study=QUANTITIES)
    out = tmp_path / "out"
    done = runner.invoke(app, ["design", str(files.study), "--out", str(out)])
    assert done.exit_code == 0, done.output
    book = openpyxl.load_workbook(out / "design.xlsx")
    assert {"Cautions", "Schedule", "Bill of quantities", "Inputs"} <= set(book.sheetnames)
    assert "licensed engineer" in " ".join(str(c.value) for c in book["Cautions"]["A"])
    sheet = book["Schedule"]
    assert sheet.freeze_panes == "A2"
    header = [c.value for c in sheet[1]]
    assert "length (m)" in header and "cost (USD)" in header and "static head (m)" in header
    formats = {h: sheet.cell(row=2, column=i + 1).number_format for i, h in enumerate(header)}
    assert formats["cost (USD)"] == "#,##0" and formats["length (m)"] == "#,##0.0"
    assert formats["static head (m)"] == "#,##0.00"
    assert all(sheet.column_dimensions[chr(65 + i)].width >= 6 for i in range(len(header)))
    _check_bill(book["Bill of quantities"], files, out)


def _check_bill(sheet, files, out: Path) -> None:
    rows = list(sheet.iter_rows(values_only=True))
    header = list(rows[0])
    column = {name: header.index(name) for name in header}
    catalogue = pd.read_csv(files.catalogue)
    design = pd.read_csv(out / "design.csv")
    pipes = [r for r in rows[1:] if r[column["unit"]] == "m"]
    assert len(pipes) == len(design.groupby(["material", "dn_mm", "pressure_class"]))
    for row in pipes:
        material, size, pressure_class = re.match(
            r"(.+) DN(\d+) (\S+) pipe", row[column["description"]]).groups()
        laid = design[(design.material == material) & (design.dn_mm == int(size))
                      & (design.pressure_class == pressure_class)]["length_m"].sum()
        quantity = row[column["quantity"]]
        assert quantity == pytest.approx(12.0 * math.ceil(laid / 12.0 - 1e-9))
        assert laid <= quantity + 1e-6 < laid + 12.0
        rate = catalogue[(catalogue.material == material) & (catalogue.dn_mm == int(size))
                         & (catalogue.pressure_class == pressure_class)]["cost_per_m"].iloc[0]
        assert row[column["rate (USD)"]] == pytest.approx(rate)
        assert row[column["amount (USD)"]] == pytest.approx(quantity * rate)
    valves = pd.read_csv(out / "appurtenances.csv")
    air = next(r for r in rows if str(r[column["description"]]).startswith("air valves"))
    assert air[column["quantity"]] == (valves["kind"] == "air valve").sum()
    assert air[column["amount (USD)"]] == pytest.approx(1500.0 * air[column["quantity"]])
    total = next(r for r in rows if r[column["description"]] == "total of the priced items")
    priced = sum(r[column["amount (USD)"]] or 0 for r in rows[1:rows.index(total)])
    assert total[column["amount (USD)"]] == pytest.approx(priced)


def test_csvs_carry_rounded_values(runner, study_files, tmp_path):
    out = tmp_path / "out"
    done = runner.invoke(app, ["design", str(study_files.study), "--out", str(out)])
    assert done.exit_code == 0, done.output
    lines = (out / "design.csv").read_text(encoding="utf-8").splitlines()
    header = lines[0].split(",")
    for line in lines[1:]:
        cells = dict(zip(header, line.split(","), strict=True))
        assert re.fullmatch(r"\d+", cells["dn_mm"]), cells["dn_mm"]
        assert re.fullmatch(r"\d+(\.\d{1,3})?", cells["length_m"]), cells["length_m"]
        assert re.fullmatch(r"\d+(\.\d{1,2})?", cells["cost"]), cells["cost"]


def test_each_option_keeps_its_colour_in_every_report(runner, make_study, tmp_path):
    first = make_study(folder="north")
    second = make_study(folder="south", study={"catalogue": {"file": "catalogue.csv",
                                                             "materials": ["PE"]}})
    colours = {}
    for run, order in (("one", [first, second]), ("two", [second, first])):
        out = tmp_path / run
        done = runner.invoke(app, ["compare", *(str(f.study) for f in order), "--out",
                                   str(out)])
        assert done.exit_code == 0, done.output
        page = (out / "comparison.html").read_text(encoding="utf-8")
        assert page.count("<script") == 2  # plotly.js once, then the charts' data
        for name in ("north", "south"):
            found = re.search(r'class="swatch" style="background:(#[0-9A-Fa-f]{6})">'
                              rf"</span>Option {name}:", page)
            assert found, name
            colour = found.group(1)
            own = (out / name / "report.html").read_text(encoding="utf-8")
            assert f'"color":"{colour}"' in own  # the option's pipe in its own report
            colours[(run, name)] = colour
    assert colours[("one", "north")] != colours[("one", "south")]
    assert colours[("one", "north")] == colours[("two", "north")]  # order does not matter
    assert colours[("one", "south")] == colours[("two", "south")]


def test_the_report_states_its_inputs_in_words(study_files):
    """Issue 16, item 2: flows per scenario, offtakes, levels, roughness and its basis,
    fittings and local losses, rules, the catalogue and the solver, in plain words rather
    than key names (common practice, no source: a reviewer checks the inputs first)."""
    study = optimiser.load_study(study_files.study)
    result = optimiser.check_design(study, optimiser.load_design(study_files.design, study))
    page = render_report(result, schedule(result))
    inputs = page.split("Flows per scenario", 1)[1]
    for heading in ("Offtakes", "Levels and route", "Friction and roughness",
                    "Fittings and local losses", "Design rules", "Pipe catalogue",
                    "Surge and solver"):
        assert heading in inputs, heading
    assert "peak day" in inputs and "25" in inputs  # the scenario and its flow (L/s)
    assert "village" in inputs and "valve chamber" in inputs  # offtake and fitting
    assert "top_water_level_m" not in inputs and "local_k_per_km" not in inputs
