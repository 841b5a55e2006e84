"""Every worked-example notebook in notebooks/ runs from top to bottom, so none can rot.

The notebooks are stored without outputs (small diffs, no stale numbers beside the code). Each
is read as plain nbformat-4 JSON and its code cells are executed in order in one namespace, in
this process: no Jupyter kernel or extra dependency is needed. The test, not the notebook,
chooses the non-interactive Agg backend (MPLBACKEND=Agg and ``matplotlib.use``), and the
working directory is a temporary one, so a notebook can neither open windows nor leave files in
the repository. A notebook itself must not force a backend: in Jupyter that would stop its
figures from showing.
"""
import json
import re
from pathlib import Path

import matplotlib
import pytest

NOTEBOOK_DIR = Path(__file__).resolve().parent.parent / "notebooks"
NOTEBOOKS = sorted(NOTEBOOK_DIR.glob("*.ipynb"))


def _source(cell):
    source = cell.get("source", "")
    return "".join(source) if isinstance(source, list) else source


def _load(path):
    notebook = json.loads(path.read_text(encoding="utf-8"))
    assert notebook.get("nbformat") == 4, f"{path.name}: nbformat must be 4, got {notebook.get('nbformat')!r}"
    assert isinstance(notebook.get("cells"), list), f"{path.name}: no list of cells"
    return notebook


def test_there_is_a_notebook():
    assert NOTEBOOKS, f"no notebooks found in {NOTEBOOK_DIR}"


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_notebook_is_stored_without_outputs(path):
    notebook = _load(path)
    for number, cell in enumerate(notebook["cells"]):
        assert cell.get("cell_type") in ("markdown", "code", "raw"), (
            f"{path.name}: cell {number} has unknown type {cell.get('cell_type')!r}")
        if cell["cell_type"] == "code":
            assert cell.get("outputs") == [], f"{path.name}: cell {number} has stored outputs"
            assert cell.get("execution_count") is None, (
                f"{path.name}: cell {number} has execution_count {cell.get('execution_count')!r}")


#: Ways a notebook could force a backend: a call to matplotlib.use / pyplot.switch_backend, a
#: `%matplotlib <backend>` magic naming a non-inline backend, or setting MPLBACKEND.
FORCED_BACKEND = re.compile(r"\b(?:matplotlib|mpl)\.use\s*\(|switch_backend\s*\(|MPLBACKEND|"
                            r"^\s*%matplotlib\s+(?!inline\b|widget\b)\w", re.MULTILINE)


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_notebook_leaves_the_backend_to_jupyter(path):
    notebook = _load(path)
    for number, cell in enumerate(notebook["cells"]):
        if cell["cell_type"] == "code":
            found = FORCED_BACKEND.search(_source(cell))
            assert found is None, (f"{path.name}: cell {number} forces a matplotlib backend "
                                   f"({found.group(0).strip()!r}); figures would not show in "
                                   f"Jupyter")


def test_the_backend_check_catches_forcing():
    for text in ('import matplotlib\nmatplotlib.use("Agg")', "plt.switch_backend('agg')",
                 "%matplotlib agg", "os.environ['MPLBACKEND'] = 'Agg'"):
        assert FORCED_BACKEND.search(text), text
    for text in ("%matplotlib inline", "import matplotlib.pyplot as plt\nplt.show()"):
        assert not FORCED_BACKEND.search(text), text


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.name for p in NOTEBOOKS])
def test_notebook_runs(path, tmp_path, monkeypatch):
    monkeypatch.setenv("MPLBACKEND", "Agg")
    matplotlib.use("Agg", force=True)
    import matplotlib.pyplot as plt

    notebook = _load(path)
    monkeypatch.chdir(tmp_path)
    before = sorted(NOTEBOOK_DIR.iterdir())
    namespace = {"__name__": "__main__"}
    code_cells = [(n, _source(c)) for n, c in enumerate(notebook["cells"]) if c["cell_type"] == "code"]
    assert code_cells, f"{path.name} has no code cells"
    try:
        for number, source in code_cells:
            try:
                exec(compile(source, f"{path.name} cell {number}", "exec"), namespace)
            except Exception as error:  # noqa: BLE001 - any failure is reported with its cell
                pytest.fail(f"{path.name}: cell {number} raised {type(error).__name__}: {error}")
    finally:
        plt.close("all")
    # A notebook may write only into the temporary working directory, never beside itself.
    assert sorted(NOTEBOOK_DIR.iterdir()) == before, f"{path.name} left files in {NOTEBOOK_DIR}"
