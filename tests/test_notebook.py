"""The worked notebook runs from top to bottom (so it cannot rot)."""

import nbclient
import nbformat

from conftest import REPO

NOTEBOOK = REPO / "notebooks" / "plan_a_week.ipynb"


def test_notebook_executes():
    nb = nbformat.read(NOTEBOOK, as_version=4)
    client = nbclient.NotebookClient(nb, timeout=300, kernel_name="python3",
                                     resources={"metadata": {"path": str(REPO / "notebooks")}})
    client.execute()
    outputs = [o for cell in nb.cells if cell.cell_type == "code" for o in cell.get("outputs", [])]
    assert not [o for o in outputs if o.get("output_type") == "error"]
    images = [o for o in outputs if "image/png" in o.get("data", {})]
    assert len(images) == 2
    last = nb.cells[-1].outputs[0]["data"]["text/plain"]
    assert "schedule.csv" in last and "plan.ics" in last
