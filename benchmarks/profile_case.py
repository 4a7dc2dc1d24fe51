"""Where one batch case's time goes: the kernel's reset and each cell, case after case in one kept kernel.

    python benchmarks/profile_case.py [--cases 6] [--template single_mass_harmonic] [--inputs FILE]

Builds the P-101 example (or the inputs given) several times in one warmed-up
kernel, as a batch worker does, and prints for each case the whole time, the
reset's and each cell's (the injected inputs cell and the save cell included),
so a change to the kernel's reset, a template or the sheet can be judged cell
by cell. The machine is shared: compare runs made one after the other.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import nbclient

from calckit.workflow import kernels
from calckit.workflow.build import CELL_TIMEOUT_S, build_in_kernel, prepared_values
from calckit.workflow.held import held_fingerprint
from calckit.workflow.inputs import read_inputs
from calckit.workflow.outfolder import FolderLock
from calckit.workflow.templates import load_template

ROOT = Path(__file__).resolve().parent.parent


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--cases", type=int, default=6)
    parser.add_argument("--template", default="single_mass_harmonic")
    parser.add_argument("--inputs", type=Path, default=ROOT / "examples" / "harrow_creek_p101.toml")
    args = parser.parse_args()
    template = load_template(args.template)
    inputs = read_inputs(args.inputs)
    values = prepared_values(template, inputs)
    wheres = {name: inputs.where(name) for name in template.parameters}
    root = Path(tempfile.mkdtemp(prefix="calckit-profile-"))
    cells: list[float] = []
    original = nbclient.NotebookClient.async_execute_cell

    async def timed(self, cell, index, **kwargs):
        start = time.perf_counter()
        try:
            return await original(self, cell, index, **kwargs)
        finally:
            cells.append(time.perf_counter() - start)

    nbclient.NotebookClient.async_execute_cell = timed

    async def run() -> None:
        kernel = await kernels.start_kernel()
        try:
            start = time.perf_counter()
            await kernel.warm_up()
            print(f"kernel start and warm-up: {time.perf_counter() - start:.2f} s")
            reset = kernel.reset
            spent = {}

            async def timed_reset(folder):
                start = time.perf_counter()
                await reset(folder)
                spent["reset"] = time.perf_counter() - start

            kernel.reset = timed_reset
            for n in range(args.cases):
                cells.clear()
                out = root / f"case-{n}"
                start = time.perf_counter()
                with FolderLock(out):
                    held = held_fingerprint(out, template.name)
                    await build_in_kernel(
                        kernel, template, values, wheres, inputs.path.name, out, held, pdf=False,
                        overwrite=False, timeout=CELL_TIMEOUT_S, started=start, sources=dict(inputs.sources),
                        tolerances={k: dict(v) for k, v in inputs.tolerances.items()} or None,
                    )  # fmt: skip
                total = time.perf_counter() - start
                shown = " ".join(f"{t:.2f}" for t in cells)
                print(
                    f"case {n + 1}: {total:.2f} s; reset {spent['reset']:.2f} s; cells {sum(cells):.2f} s: {shown}"
                )
        finally:
            await kernel.aclose()

    kernels.run_sync(run)


if __name__ == "__main__":
    main()
