"""The example notebook runs top to bottom, headless, and shows the tables.

``examples/park.ipynb`` is executed with nbclient in a fresh Jupyter kernel (ipykernel) from
the ``examples/`` folder, as a reader who opens it there would run it. Its outputs are kept out
of git: the committed file must hold none.
"""

from __future__ import annotations

import re
from html.parser import HTMLParser
from pathlib import Path

import nbformat
import pytest
from nbclient import NotebookClient

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
NOTEBOOK = EXAMPLES / "park.ipynb"
FEATURES = ("mud", "slope", "shade", "water")
# Generous: the notebook measured ~35 s on a loaded two-core machine; a hang must still end.
TIMEOUT = 600


class Tables(HTMLParser):
    """The cells of each table in an HTML fragment, as lists of row texts."""

    def __init__(self, text: str) -> None:
        super().__init__()
        self.tables: list[list[list[str]]] = []
        self.images: list[str] = []
        self._cell: list[str] | None = None
        self.feed(text)

    def handle_starttag(self, tag, attrs):
        if tag == "table":
            self.tables.append([])
        elif tag == "tr":
            self.tables[-1].append([])
        elif tag in ("td", "th"):
            self._cell = []
        elif tag == "img":
            self.images.append(dict(attrs).get("src", ""))

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self.tables[-1][-1].append("".join(self._cell).strip())
            self._cell = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)


def outputs(nb) -> list[dict]:
    return [out for cell in nb.cells if cell.cell_type == "code" for out in cell.outputs]


def html_of(cell) -> str:
    return "".join(o.get("data", {}).get("text/html", "") for o in cell.outputs)


def stripped(nb) -> bool:
    """No outputs and no execution counts: what belongs in git."""
    return all(not c.outputs and c.execution_count is None
               for c in nb.cells if c.cell_type == "code")


@pytest.fixture(scope="module")
def executed():
    nb = nbformat.read(NOTEBOOK, as_version=4)
    NotebookClient(nb, timeout=TIMEOUT, kernel_name="python3",
                   resources={"metadata": {"path": str(EXAMPLES)}}).execute()
    return nb


def cell_ending_with(nb, name: str):
    """The code cell whose last line displays ``name``."""
    for cell in nb.cells:
        if cell.cell_type == "code" and cell.source.strip().splitlines()[-1] == name:
            return cell
    raise AssertionError(f"no cell displays {name}")


def test_committed_notebook_has_no_outputs(executed):
    assert stripped(nbformat.read(NOTEBOOK, as_version=4))
    # Negative control: the executed copy has outputs, and the check sees them.
    assert not stripped(executed)


def test_runs_without_errors(executed):
    assert not [o for o in outputs(executed) if o.output_type == "error"]
    # Nothing on stderr but our own diagnostic warnings (no library's warnings).
    err = "".join(o.get("text", "") for o in outputs(executed)
                  if o.output_type == "stream" and o.name == "stderr")
    assert not [ln for ln in err.splitlines() if ln and not ln.startswith("warning: ")], err


def test_posterior_shows_its_table(executed):
    parsed = Tables(html_of(cell_ending_with(executed, "posterior")))
    summary, checks = parsed.tables
    assert summary[0][:3] == ["quantity", "mean", "sd"] and "R-hat" in summary[0]
    assert [row[0] for row in summary[1:]] == list(FEATURES)
    assert all(re.fullmatch(r"-?\d+(\.\d+)?", x) for row in summary[1:] for x in row[1:])
    assert [row[0] for row in checks[1:]][0] == "divergent transitions"


def test_report_shows_verdict_weights_and_figures(executed):
    html = html_of(cell_ending_with(executed, "report"))
    parsed = Tables(html)
    weights = parsed.tables[0]
    assert weights[0][0] == "feature" and "verdict" in weights[0]
    assert [row[0] for row in weights[1:]] == list(FEATURES)
    verdicts = {row[-1] for row in weights[1:]}
    assert verdicts <= {"determined", "sign known", "sign open", "negligible",
                        "only in combination", "not identified", "pinned by assumption"}
    assert "At the 90% level the demonstrations" in html
    # The weights' histograms and the park's reward maps, inline.
    assert len(parsed.images) == 2
    assert all(src.startswith("data:image/png;base64,") for src in parsed.images)


def test_suggestions_show_their_table(executed):
    parsed = Tables(html_of(cell_ending_with(executed, "walks")))
    (ranking,) = parsed.tables
    assert ranking[0][:2] == ["rank", "suggestion"]
    assert ranking[1][0] == "batch pick 1" and ranking[2][0] == "batch pick 2"
    assert all(re.fullmatch(r"(a|another) walk from cell \(row \d, col \d\)", row[1])
               for row in ranking[1:])


def test_table_reader_needs_a_table():
    # Negative control for the parser the checks rely on: text outside a table is no table.
    assert Tables("<p>mud 1.0</p>").tables == []
    assert Tables("<table><tr><td>mud</td></tr></table>").tables == [[["mud"]]]


def python_section(readme: str) -> str:
    """The README's "From Python" section, up to the next heading of its level."""
    found = re.search(r"^## From Python\n(.*?)(?=^## )", readme, flags=re.S | re.M)
    return found.group(1) if found else ""


def starts_from_notebook(section: str) -> bool:
    first = section.strip().split("\n\n")[0]
    return "examples/park.ipynb" in first


def test_readme_python_section_starts_from_the_notebook():
    readme = (EXAMPLES.parent / "README.md").read_text(encoding="utf-8")
    assert starts_from_notebook(python_section(readme))
    assert NOTEBOOK.is_file()
    # Negative control: a section that opens with a code block does not count.
    assert not starts_from_notebook("\n```python\nimport bayesirl\n```\n\nexamples/park.ipynb")
