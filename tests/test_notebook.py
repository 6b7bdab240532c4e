"""The notebook a new user would write runs top to bottom (nbclient, the python3 kernel).

tests/notebooks/in_a_notebook.ipynb builds a problem from a DataFrame with a categorical
column and farms as groups, runs two strategies, displays the results, plots under the
inline backend, round-trips a result through JSON and puts the selector in a Pipeline
with GridSearchCV and grouped CV. Its own cells assert what they show; this test checks
that it ran and that rich (HTML) output is there.
"""

from __future__ import annotations

import importlib.util
import os
from pathlib import Path

import pytest

nbformat = pytest.importorskip("nbformat")
nbclient = pytest.importorskip("nbclient")
# Only looked up, not imported: an imported ipykernel would make this process look like a
# notebook to the progress display of every later test.
pytestmark = pytest.mark.skipif(
    any(importlib.util.find_spec(m) is None for m in ("ipykernel", "matplotlib")),
    reason="needs ipykernel and matplotlib")

NOTEBOOK = Path(__file__).resolve().parent / "notebooks" / "in_a_notebook.ipynb"


def test_notebook_runs_and_shows_html(tmp_path, monkeypatch):
    nb = nbformat.read(NOTEBOOK, as_version=4)
    # The kernel imports the featuresift under test (this checkout first).
    root = str(Path(__file__).resolve().parents[1])
    monkeypatch.setenv("PYTHONPATH", os.pathsep.join(
        p for p in (root, os.environ.get("PYTHONPATH")) if p))
    monkeypatch.setenv("OMP_NUM_THREADS", "1")
    client = nbclient.NotebookClient(nb, timeout=120, kernel_name="python3",
                                     resources={"metadata": {"path": str(tmp_path)}})
    client.execute()  # raises CellExecutionError on the first failing cell
    outputs = [o for cell in nb.cells if cell.cell_type == "code" for o in cell.outputs]
    assert not [o for o in outputs if o.output_type == "error"]
    html = [o["data"]["text/html"] for o in outputs
            if o.output_type in ("display_data", "execute_result") and "text/html" in o["data"]]
    # problem, two results, the evaluations table, the reloaded result
    assert len(html) >= 4
    assert any("featuresift search result" in h and "in-search" in h for h in html)
    assert any("featuresift selection problem" in h for h in html)
    # verbose=1 in a kernel: the search's one bar, without tqdm's "IProgress not found"
    # warning when ipywidgets is not installed (the text bar is chosen directly).
    err = "".join(o.get("text", "") for o in outputs
                  if o.output_type == "stream" and o.get("name") == "stderr")
    assert "IProgress" not in err
    assert "forward (budget 10)" in err or importlib.util.find_spec("ipywidgets")
    images = [o for o in outputs if "data" in o and "image/png" in o["data"]]
    assert images, "the inline backend showed no figure"
    assert not list(tmp_path.iterdir())  # the notebook writes nothing
