"""Every page read as a person would: the run report (with a sizing target), the comparison,
the sizing and the hindcast pages of the demo ward, made through the command line.

Parsed with the standard library's HTML parser: every table header that names a quantity
says its unit in brackets, every ± says what it is, every image has a text; every chart drawn
for the pages has labelled axes, whole-number ticks for counts of nurses and beds, and error
bars named in its legend. A headless browser, where one is installed, renders each page.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from planner.cli import cli
from planner.report import charts

DEMO = Path(__file__).resolve().parents[1] / "scenarios"
PAGES = ("run/report.html", "compare/comparison.html", "size/sizing.html", "hindcast/hindcast.html")
#: Headers that name a thing, not a quantity.
NAMES = {"week from", "plan", "shift", "weekday", "shift: measure", "horizon week", "threshold",
         "Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun"}  # fmt: skip
#: Words of a unit, one of which a quantity's brackets must hold.
UNITS = ("%", "patients", "beds", "nurses", "hours", "count", "cost", "shifts", "percentage",
         "0 to 1", "per ")  # fmt: skip
#: Words of a period, one of which a count of patients, hours or shifts must give.
PERIODS = ("per ", "total", "week", "day", "shift", "horizon")


class Tables(HTMLParser):
    """Tables (header texts and rows of cell texts) and image texts of a page."""

    def __init__(self) -> None:
        super().__init__()
        self.tables: list[dict] = []
        self.images: list[str | None] = []
        self._cell: list[str] | None = None

    def handle_starttag(self, tag, attrs):
        if tag == "table":
            self.tables.append({"headers": [], "rows": []})
        elif tag == "tr" and self.tables:
            self.tables[-1]["rows"].append([])
        elif tag in ("th", "td"):
            self._cell = []
        elif tag == "img":
            self.images.append(dict(attrs).get("alt"))

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)

    def handle_endtag(self, tag):
        if tag in ("th", "td") and self._cell is not None:
            text = "".join(self._cell).strip()
            table = self.tables[-1]
            (table["headers"] if tag == "th" else table["rows"][-1]).append(text)
            self._cell = None


def _plan(folder: Path) -> Path:
    """The demo ward over four weeks with the recursive strategy (quick), sized for a share."""
    path = folder / "ward.toml"
    path.write_text(
        f'extends = "{DEMO / "baseline.toml"}"\nhorizon_weeks = 4\n[forecast]\n'
        'strategy = "recursive"\n[sizing]\nmeasure = "no_bed_share"\n'
        "[costs]\nbed_day = 450.0\nnurse_shift = 320.0\nshort_shift = 700.0\n"
    )
    return path


@pytest.fixture(scope="module")
def pages(tmp_path_factory):
    """The four pages' folders, and the axes of every chart drawn for them."""
    folder = tmp_path_factory.mktemp("pages")
    plan = _plan(folder)
    other = folder / "more_beds.toml"
    other.write_text(f'extends = "{plan}"\nname = "Two more beds"\n[beds]\nbase = 30\n')
    drawn: list[list] = []
    real = charts.png

    def keep(figure, margins):
        figure.canvas.draw()  # ticks as they are drawn
        drawn.append(figure.axes)
        return real(figure, margins)

    quick = ["--paths", "150", "--jobs", "1"]
    commands = [
        ["run", str(plan), *quick, "--out", str(folder / "run")],
        ["compare", str(plan), str(other), *quick, "--out", str(folder / "compare")],
        ["size", str(plan), *quick, "--out", str(folder / "size")],
        ["hindcast", str(plan), "--paths", "40", "--origins", "3", "--jobs", "1", "--out",
         str(folder / "hindcast")],
    ]  # fmt: skip
    with pytest.MonkeyPatch.context() as patch:
        patch.setattr(charts, "png", keep)
        for command in commands:
            result = CliRunner().invoke(cli, command)
            assert result.exit_code == 0, result.output
    return folder, drawn


def _parsed(folder: Path, page: str) -> Tables:
    parser = Tables()
    parser.feed((folder / page).read_text())
    return parser


def _brackets(header: str) -> str:
    return " ".join(re.findall(r"\(([^()]*)\)", header))


def _unit_problem(label: str) -> str | None:
    """Why a quantity's label does not say its unit (and period), or None."""
    inside = _brackets(label)
    if not inside:
        return "nothing in brackets"
    if not any(word in label for word in UNITS):
        return "no unit"
    counts = re.search(r"\b(patients|hours|shifts)\b", label) and "% of" not in inside
    if counts and not any(word in inside for word in PERIODS):
        return "a count without its period in brackets"
    return None


@pytest.mark.parametrize("page", PAGES)
def test_every_quantity_header_says_its_unit(pages, page):
    folder, _ = pages
    parsed = _parsed(folder, page)
    assert parsed.tables, page
    for table in parsed.tables:
        headers = table["headers"]
        for number, header in enumerate(headers):
            if header in NAMES:
                continue
            assert _unit_problem(header) is None, (page, header, _unit_problem(header))
            column = [row[number] for row in table["rows"] if len(row) == len(headers)]
            if any("±" in cell for cell in column):
                assert re.search(r"SE|95%", header), (page, header, "± without what it is")
        if headers and headers[0] == "shift: measure":  # measures by weekday: units in rows
            for row in table["rows"]:
                if row:
                    assert _unit_problem(row[0]) is None, (page, row[0])


@pytest.mark.parametrize("page", PAGES)
def test_pages_read_plainly(pages, page):
    folder, _ = pages
    text = (folder / page).read_text()
    parsed = _parsed(folder, page)
    assert parsed.images and all(parsed.images), (page, "an image without a text")
    assert "professional judgement" in text and "not guarantees" in text
    for wrong in ("+/-", "± +", "± -", "se if run independently", " h, 1 nurse"):
        assert wrong not in text, (page, wrong)
    assert not re.search(r"\b\d\d\.\d\d-\d\d\.\d\d\b", text), (page, "shift times as decimals")


def test_every_chart_has_labelled_axes(pages):
    _, drawn = pages
    # run: 5 charts and the sizing chart; compare 1; size 1; hindcast 2.
    assert len(drawn) == 10
    for axes_list in drawn:
        for axes in axes_list:
            spec = axes.get_subplotspec()
            where = axes.get_title() or axes_list[0].get_title()
            if spec.is_first_col():
                assert axes.get_ylabel(), (where, "no y label")
            if spec.is_last_row():
                assert axes.get_xlabel(), (where, "no x label")
            label = axes.get_ylabel() + " " + axes.get_xlabel()
            if "nurses" in axes.get_ylabel() or "beds" in axes.get_xlabel():
                ticks = axes.get_yticks() if "nurses" in axes.get_ylabel() else axes.get_xticks()
                assert np.allclose(ticks, np.round(ticks)), (where, label, ticks)
            if any(getattr(c, "has_yerr", False) for c in axes.containers):
                legends = [a.get_legend() for a in axes_list if a.get_legend()]
                texts = [t.get_text() for legend in legends for t in legend.get_texts()]
                assert any("95%" in t for t in texts), (where, "error bars not named")


def _browser() -> list[str] | None:
    for name in ("chromium", "chromium-browser", "google-chrome", "google-chrome-stable"):
        if shutil.which(name):
            return [name, "--headless", "--disable-gpu", "--no-sandbox", "--window-size=1280,4000"]
    if shutil.which("firefox"):
        return ["firefox", "--headless", "--window-size=1280,4000"]
    return None


@pytest.mark.parametrize("page", PAGES)
def test_pages_render_in_a_headless_browser(pages, page, tmp_path):
    browser = _browser()
    if browser is None:
        pytest.skip("no headless browser (chromium, chrome or firefox) installed")
    folder, _ = pages
    shot = tmp_path / "page.png"
    flag = "--screenshot" if "firefox" in browser[0] else f"--screenshot={shot}"
    command = [*browser, flag, *([str(shot)] if "firefox" in browser[0] else [])]
    done = subprocess.run(
        [*command, (folder / page).resolve().as_uri()], capture_output=True, timeout=120
    )
    assert done.returncode == 0, done.stderr[-2000:]
    assert shot.is_file() and shot.stat().st_size > 10_000
