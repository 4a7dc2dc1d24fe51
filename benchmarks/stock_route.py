"""The stock route: execute a notebook with nbclient, export it with nbconvert's HTMLExporter.

Usage: ``python stock_route.py NOTEBOOK OUT_HTML``. This is what a user without
calckit's build would run to get an HTML copy of an executed notebook; the
benchmark runs it as a command, like ``calckit build``, so both include the
interpreter start and the imports. The kernel runs in this interpreter
(``sys.executable``), as calckit's build does.
"""

from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path


def main() -> None:
    import nbformat
    from jupyter_client.kernelspec import KernelSpec, KernelSpecManager
    from nbclient import NotebookClient
    from nbconvert import HTMLExporter

    class ThisPython(KernelSpecManager):
        def get_kernel_spec(self, kernel_name):
            return KernelSpec(
                argv=[sys.executable, "-m", "ipykernel_launcher", "-f", "{connection_file}"],
                display_name="Python 3",
                language="python",
            )

    source, out = Path(sys.argv[1]), Path(sys.argv[2])
    notebook = nbformat.read(source, as_version=4)
    with tempfile.TemporaryDirectory() as work:
        client = NotebookClient(
            notebook,
            timeout=600,
            kernel_name="python3",
            resources={"metadata": {"path": work}},
            kernel_spec_manager=ThisPython(),
        )
        client.execute(env={**os.environ, "MPLBACKEND": "Agg"})
    body, _ = HTMLExporter().from_notebook_node(notebook)
    out.write_text(body, encoding="utf-8")


if __name__ == "__main__":
    main()
