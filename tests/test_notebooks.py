"""The notebooks in ``notebooks/`` run on the bundled ``sample_runs/`` without error.

They are executed with nbclient on the ``python3`` Jupyter kernel (ipykernel; CI needs the
kernel spec, e.g. ``python -m ipykernel install --user``, when the environment has none). If no
``python3`` kernel is registered, the code cells run in-process, in a fresh namespace each,
with IPython magics left out.
"""

from __future__ import annotations

from pathlib import Path

import nbformat
import pytest

NOTEBOOKS = Path(__file__).resolve().parents[1] / "notebooks"
PATHS = sorted(NOTEBOOKS.glob("*.ipynb"))
TIMEOUT_S = 120  # per cell; each notebook takes a few seconds


def _has_kernel(name: str = "python3") -> bool:
    try:
        from jupyter_client.kernelspec import KernelSpecManager
    except ImportError:
        return False
    return name in KernelSpecManager().find_kernel_specs()


def _run_in_process(nb) -> None:
    import matplotlib

    matplotlib.use("Agg")
    namespace: dict = {"__name__": "__notebook__"}
    for cell in nb.cells:
        if cell.cell_type != "code":
            continue
        code = "\n".join(line for line in cell.source.splitlines()
                         if not line.lstrip().startswith(("%", "!")))
        exec(compile(code, "<notebook cell>", "exec"), namespace)


def test_there_are_four_notebooks():
    assert [p.name[:2] for p in PATHS] == ["01", "02", "03", "04"]


@pytest.mark.parametrize("path", PATHS, ids=[p.stem for p in PATHS])
def test_notebook_runs(path):
    nb = nbformat.read(path, as_version=4)
    nbformat.validate(nb)
    if not _has_kernel():
        _run_in_process(nb)
        return
    from nbclient import NotebookClient

    client = NotebookClient(nb, timeout=TIMEOUT_S, kernel_name="python3",
                            resources={"metadata": {"path": str(NOTEBOOKS)}})
    client.execute()  # raises CellExecutionError on the first failing cell
    errors = [o for c in nb.cells if c.cell_type == "code" for o in c.get("outputs", [])
              if o.get("output_type") == "error"]
    assert errors == []
    stderr = [o["text"] for c in nb.cells if c.cell_type == "code"
              for o in c.get("outputs", []) if o.get("name") == "stderr"]
    assert not [t for t in stderr if "Warning" in t], stderr
