"""A batch on a real ``dask.distributed`` cluster, compared file by file with the process-pool run.

The cluster is local (started and closed here: two worker processes, one thread
each), and each worker is given a temporary folder of its own that the batch
never sees: the cases go to the workers as data (the template's text, the
inputs, the options) and come back as the built files' bytes, which the batch
writes into its output folder itself. The same cases are then run in the
default process pool, and every file of every case is compared byte for byte.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import pytest

from calckit.workflow import run_batch

EXAMPLE = Path(__file__).parent.parent / "examples" / "harrow_creek_p101.toml"
TEMPLATE = "single_mass_harmonic"


def _own_temp_folder(base: str, dask_worker=None) -> str:
    """Run on each worker (``Client.run``): its temporary files go to a folder of its own."""
    folder = Path(base) / f"worker-{dask_worker.name}"
    folder.mkdir(parents=True, exist_ok=True)
    tempfile.tempdir = str(folder)
    return str(folder)


@pytest.mark.slow
def test_batch_on_a_dask_cluster_matches_the_process_pool(tmp_path):
    distributed = pytest.importorskip("distributed")
    cases = tmp_path / "cases.csv"
    cases.write_text(
        "case,forcing_frequency,damping_ratio\nslow,1200 rpm,0.05\nfast,1480 rpm,0.08\n", encoding="utf-8"
    )
    workers_root = tmp_path / "workers"
    with (
        distributed.LocalCluster(
            n_workers=2,
            threads_per_worker=1,
            processes=True,
            dashboard_address=":0",  # any free port: the machine may run other clusters
            local_directory=str(workers_root / "dask"),
        ) as cluster,
        distributed.Client(cluster) as client,
    ):
        folders = client.run(_own_temp_folder, str(workers_root))
        assert len(set(folders.values())) == 2  # one folder each
        on_dask = run_batch(TEMPLATE, cases, tmp_path / "dask", inputs=EXAMPLE, executor=client)
    in_pool = run_batch(TEMPLATE, cases, tmp_path / "pool", inputs=EXAMPLE, workers=1)

    assert [(c.name, c.ok, c.message) for c in on_dask.cases] == [("slow", True, ""), ("fast", True, "")]
    assert [(c.name, c.ok) for c in in_pool.cases] == [("slow", True), ("fast", True)]
    for case in ("slow", "fast"):
        dask_files = {p.name: p.read_bytes() for p in (tmp_path / "dask" / case).iterdir()}
        pool_files = {p.name: p.read_bytes() for p in (tmp_path / "pool" / case).iterdir()}
        names = {f"{TEMPLATE}{s}" for s in (".json", ".html", ".ipynb")}
        assert names <= set(dask_files) and set(dask_files) == set(pool_files)
        for name in sorted(names):
            assert dask_files[name] == pool_files[name], f"{case}/{name} differs"
    # the summaries list the same cases, results and verdicts (the case times differ)
    assert on_dask.summary_csv.read_bytes() == in_pool.summary_csv.read_bytes()
    # the workers' own folders were used and left empty: each case's scratch folder was removed
    for folder in folders.values():
        assert Path(folder).is_dir()
        assert [p.name for p in Path(folder).iterdir() if p.name.startswith("calckit-")] == []
