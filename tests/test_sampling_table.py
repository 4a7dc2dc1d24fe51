"""The ``[sampling]`` table of an inputs file (calckit.workflow.sampling_table) and its way to the sheet.

No kernel here: the table as read, every refusal pinned in full, the cell the build
injects, ``Sheet(sampling=...)`` against ``sheet.sample_study`` (the one rule), the
fingerprint, the built record's check and the batch's self-contained case. The one
build of a sampled example, checked against numpy and the textbook closed form, is in
``tests/test_sampled_build.py``. Scenario: backwash pump P-131 of the Harrow Creek
works (invented).
"""

from __future__ import annotations

import concurrent.futures as cf
import pickle
from pathlib import Path

import pytest
import sympy as sp

from calckit.core.units import Q_
from calckit.errors import BuildError, InputsError, SheetError
from calckit.sheet import Sheet
from calckit.workflow.built_record import check_sampling
from calckit.workflow.inputs import read_inputs
from calckit.workflow.templates import inputs_cell_source

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"

PUMP = (
    'subject = "Backwash pump P-131"\n'  # line 1
    "[pump]\n"  # line 2
    'mass = "1200 kg"\n'  # line 3
    'stiffness = { value = "400 kN/m", tolerance = "15 %" }\n'  # line 4
    "\n"  # line 5
    "[sampling]\n"  # line 6
)


def written(tmp_path: Path, sampling: str, head: str = PUMP) -> Path:
    path = tmp_path / "p131.toml"
    path.write_text(head + sampling, encoding="utf-8")
    return path


class TestRead:
    def test_uniform(self, tmp_path):
        path = written(tmp_path, 'samples = 100_000\ndistribution = "uniform"\nseed = 2026\n')
        assert dict(read_inputs(path).sampling) == {
            "samples": 100_000,
            "distribution": "uniform",
            "seed": 2026,
        }

    def test_normal_with_k(self, tmp_path):
        path = written(tmp_path, 'samples = 5000\ndistribution = "normal"\nseed = 0\nk = 2\n')
        read = read_inputs(path)
        assert dict(read.sampling) == {"samples": 5000, "distribution": "normal", "seed": 0, "k": 2.0}
        assert "sampling" not in read.groups.values() and set(read.values) == {"subject", "mass", "stiffness"}

    def test_none_asked(self, tmp_path):
        assert read_inputs(written(tmp_path, "", PUMP.replace("[sampling]\n", ""))).sampling is None

    def test_the_example(self):
        read = read_inputs(EXAMPLES / "harrow_creek_p101_sampled.toml")
        assert dict(read.sampling) == {"samples": 100_000, "distribution": "uniform", "seed": 2026}
        assert set(read.tolerances) == {"mass", "stiffness", "forcing_frequency"}

    def test_the_batch_base_file_is_not_sampled(self):
        """harrow_creek_p101.toml is the batch benchmark's base file: it stays without [sampling]."""
        assert read_inputs(EXAMPLES / "harrow_creek_p101.toml").sampling is None

    def test_injected_cell(self, tmp_path):
        """The build's cell gives the request as a literal, after the bands; none asked: no line at all."""
        read = read_inputs(written(tmp_path, 'seed = 7\nsamples = 1000\ndistribution = "normal"\nk = 2.5\n'))
        cell = inputs_cell_source(dict(read.values), "p131.toml", "ab", None, read.tolerances, read.sampling)
        assert cell.endswith(
            "input_tolerances = {\n    'stiffness': {'tolerance': '15 %'},\n}\n"
            "input_sampling = {'samples': 1000, 'distribution': 'normal', 'seed': 7, 'k': 2.5}\n"
        )
        assert "input_sampling" not in inputs_cell_source({}, "p131.toml", "ab", None, read.tolerances, None)


#: (lines of the [sampling] table from line 7, the message after the file's path)
REFUSED = [
    ('samples = 1000\ndistribution = "uniform"\nseed = 1\nsigma = 3\n',
     'line 10, sampling.sigma: unknown key "sigma" in the [sampling] table. The table takes samples, '
     "distribution, seed and, for a normal distribution, k."),
    ('sample = 1000\ndistribution = "uniform"\nseed = 1\n',
     'line 7, sampling.sample: unknown key "sample" in the [sampling] table. Did you mean "samples"? The table '
     "takes samples, distribution, seed and, for a normal distribution, k."),
    ('samples = 1000\ndistribution = "uniform"\n',
     "line 6, sampling: the [sampling] table does not give seed. A sampled study states how many samples, from "
     'which distribution, with which seed: [sampling] with samples = 100000, distribution = "uniform", '
     "seed = 2026."),
    ('samples = "100000"\ndistribution = "uniform"\nseed = 1\n',
     'line 7, sampling.samples: samples = "100000" is not a whole number. Write a whole number from 100 to '
     "10,000,000 without quotes or a decimal point, e.g. samples = 100000."),
    ('samples = 1e5\ndistribution = "uniform"\nseed = 1\n',
     "line 7, sampling.samples: samples = 100000.0 is not a whole number. Write a whole number from 100 to "
     "10,000,000 without quotes or a decimal point, e.g. samples = 100000."),
    ('samples = true\ndistribution = "uniform"\nseed = 1\n',
     "line 7, sampling.samples: samples = true is not a whole number. Write a whole number from 100 to "
     "10,000,000 without quotes or a decimal point, e.g. samples = 100000."),
    ('samples = 99\ndistribution = "uniform"\nseed = 1\n',
     "line 7, sampling.samples: 99 samples are fewer than the 100 a study draws at least. Write a whole number "
     "from 100 to 10,000,000, e.g. samples = 100000."),
    ('samples = 10_000_001\ndistribution = "uniform"\nseed = 1\n',
     "line 7, sampling.samples: 10,000,001 samples are more than the 10,000,000 a study draws at most. Write a "
     "whole number from 100 to 10,000,000, e.g. samples = 100000."),
    ('samples = 1000\ndistribution = "triangular"\nseed = 1\n',
     'line 8, sampling.distribution: distribution = "triangular" is not a distribution the study draws from. '
     'Write "uniform" or "normal": "uniform" over each band, "normal" about the value with the half-band as k '
     "standard deviations."),
    ('samples = 1000\ndistribution = "Normal"\nseed = 1\n',
     'line 8, sampling.distribution: distribution = "Normal" is not a distribution the study draws from. Did '
     'you mean "normal"? Write "uniform" or "normal": "uniform" over each band, "normal" about the value with '
     "the half-band as k standard deviations."),
    ("samples = 1000\ndistribution = 1\nseed = 1\n",
     "line 8, sampling.distribution: distribution = 1 is not a distribution the study draws from. Write "
     '"uniform" or "normal": "uniform" over each band, "normal" about the value with the half-band as k '
     "standard deviations."),
    ('samples = 1000\ndistribution = "uniform"\nseed = -1\n',
     "line 9, sampling.seed: seed = -1 is not a whole number of zero or more. Write the seed the samples are "
     "drawn from, e.g. seed = 2026, so that the study can be drawn again."),
    ('samples = 1000\ndistribution = "uniform"\nseed = 2.5\n',
     "line 9, sampling.seed: seed = 2.5 is not a whole number of zero or more. Write the seed the samples are "
     "drawn from, e.g. seed = 2026, so that the study can be drawn again."),
    ('samples = 1000\ndistribution = "uniform"\nseed = 1\nk = 3\n',
     'line 10, sampling.k: k is the half-band in standard deviations of a normal distribution, not of a '
     '"uniform" one. Remove k, or write distribution = "normal".'),
    ('samples = 1000\ndistribution = "normal"\nseed = 1\nk = 0\n',
     "line 10, sampling.k: k = 0 is not a number of standard deviations above zero. Write e.g. k = 3 (the "
     "half-band as 3 standard deviations)."),
    ('samples = 1000\ndistribution = "normal"\nseed = 1\nk = inf\n',
     "line 10, sampling.k: k = inf is not a number of standard deviations above zero. Write e.g. k = 3 (the "
     "half-band as 3 standard deviations)."),
    ('samples = 1000\ndistribution = "normal"\nseed = 1\nk = "3"\n',
     'line 10, sampling.k: k = "3" is not a number of standard deviations above zero. Write e.g. k = 3 (the '
     "half-band as 3 standard deviations)."),
]  # fmt: skip


class TestRefused:
    @pytest.mark.parametrize(("lines", "message"), REFUSED, ids=[f"refused-{i}" for i in range(len(REFUSED))])
    def test_refused_at_its_line(self, tmp_path, lines, message):
        path = written(tmp_path, lines)
        with pytest.raises(InputsError) as info:
            read_inputs(path)
        assert str(info.value) == f"{path}, {message}"

    def test_nothing_to_sample(self, tmp_path):
        """[sampling] in a file whose inputs carry no band is refused at the table's header."""
        head = PUMP.replace('{ value = "400 kN/m", tolerance = "15 %" }', '"400 kN/m"')
        path = written(tmp_path, 'samples = 1000\ndistribution = "uniform"\nseed = 1\n', head)
        with pytest.raises(InputsError) as info:
            read_inputs(path)
        assert str(info.value) == (
            f"{path}, line 6, sampling: the [sampling] table asks for a sampled study, but no input carries a "
            'tolerance band to sample. Give the inputs that vary their bands (stiffness = { value = "720 kN/m", '
            'tolerance = "15 %" }, or a [tolerances] table), or remove the [sampling] table.'
        )

    def test_a_band_in_the_tolerances_table_is_something_to_sample(self, tmp_path):
        head = PUMP.replace('{ value = "400 kN/m", tolerance = "15 %" }', '"400 kN/m"')
        head = head.replace("[sampling]\n", '[tolerances]\nmass = "10 %"\n[sampling]\n')
        path = written(tmp_path, 'samples = 1000\ndistribution = "uniform"\nseed = 1\n', head)
        assert read_inputs(path).sampling["samples"] == 1000


def sampled_sheet(sampling=None, bands=True):
    """P-131's natural frequency checked: a sheet with a stiffness band, asked for *sampling*."""
    sheet = Sheet(
        "Backwash pump P-131", show=False, sampling=sampling,
        tolerances={"stiffness": {"tolerance": "15 %"}} if bands else {},
    )  # fmt: skip
    k_, m_ = sp.symbols("k m")
    m = sheet.given("mass", "1200 kg", "m", "Pump and base", "mass")
    k = sheet.given("stiffness", "400 kN/m", "k", "Springs together", "stiffness")
    wn = sheet.calc("omega_n", sp.sqrt(k_ / m_), {"k": k, "m": m}, unit="rad/s")
    sheet.check("natural frequency", wn, Q_(19, "rad/s"), basis="common practice, no source")
    return sheet


ASKED = {"samples": 20_000, "distribution": "normal", "seed": 11, "k": 2.0}


class TestSheet:
    def test_the_same_request_as_sample_study(self):
        """Sheet(sampling=...) asks for what sheet.sample_study asks for, and the study is drawn.

        omega_n <= 19 rad/s iff k <= 1200 kg (19 rad/s)^2 = 433.2 kN/m; k normal about 400 kN/m with
        the half-band (60 kN/m) as 2 sigma: P = Phi(33.2 / 30) (scipy.stats.norm.cdf).
        """
        from scipy.stats import norm

        by_keyword = sampled_sheet(ASKED)
        by_method = sampled_sheet()
        by_method.sample_study(n=20_000, distribution="normal", seed=11, k=2.0)
        assert by_keyword.sampling == by_method.sampling
        data = by_keyword.record()["tolerances"]
        assert data["samples"] == {"n": 20_000, "distribution": "normal", "seed": 11, "k": 2.0}
        exact = norm.cdf((1200 * 19**2 - 400e3) / 30e3)
        fraction = data["checks"][0]["pass_fraction"]
        assert abs(fraction - exact) < 4 * (exact * (1 - exact) / 20_000) ** 0.5

    def test_empty_is_none(self):
        assert (
            sampled_sheet({}).sampling is None and "samples" not in sampled_sheet({}).record()["tolerances"]
        )

    def test_sampling_enters_the_fingerprint(self):
        """A sheet sampled otherwise is another sheet; one not sampled keeps the fingerprint it had."""
        prints = {
            sampled_sheet(None).fingerprint,
            sampled_sheet(ASKED).fingerprint,
            sampled_sheet({**ASKED, "seed": 12}).fingerprint,
            sampled_sheet({**ASKED, "samples": 20_001}).fingerprint,
            sampled_sheet({**ASKED, "k": 3.0}).fingerprint,
            sampled_sheet({**ASKED, "distribution": "uniform"}).fingerprint,
        }
        assert len(prints) == 6
        assert sampled_sheet({}).fingerprint == sampled_sheet(None).fingerprint
        assert sampled_sheet(ASKED).fingerprint == sampled_sheet(dict(ASKED)).fingerprint

    @pytest.mark.parametrize(
        ("sampling", "error", "message"),
        [
            ({"samples": 20, "distribution": "uniform", "seed": 1}, InputsError,
             "Sheet(sampling=...): n=20 is not a number of samples from 100 to 10,000,000. Give a whole number, "
             "e.g. n=100_000."),
            ({"samples": 200, "distribution": "uniform"}, SheetError,
             "Sheet(sampling=...): the sampling asked for has no seed. Give samples, distribution, seed and, for a "
             'normal distribution, k: e.g. sampling={"samples": 100000, "distribution": "uniform", "seed": 2026}.'),
            ({"n": 200, "distribution": "uniform", "seed": 1}, SheetError,
             "Sheet(sampling=...): the sampling asked for has unknown key 'n'; no samples. Give samples, "
             'distribution, seed and, for a normal distribution, k: e.g. sampling={"samples": 100000, '
             '"distribution": "uniform", "seed": 2026}.'),
            ([200, "uniform", 1], SheetError,
             "Sheet(sampling=...): the sampling asked for is a list, not a table of its keys. Give e.g. "
             'sampling={"samples": 100000, "distribution": "uniform", "seed": 2026}.'),
        ],
        ids=["too few", "no seed", "unknown key", "not a table"],
    )  # fmt: skip
    def test_refused(self, sampling, error, message):
        with pytest.raises(error) as info:
            Sheet("x", show=False, sampling=sampling)
        assert str(info.value) == message


class FakeTemplate:
    path = Path("templates/own.ipynb")


class TestBuiltRecord:
    """The build refuses a sheet whose record does not show the study the inputs file asks for."""

    FILE = {"samples": 20_000, "distribution": "normal", "seed": 11, "k": 2.0}

    def test_shown(self):
        check_sampling(FakeTemplate(), sampled_sheet(ASKED).record(), self.FILE)

    def test_not_passed_to_the_sheet(self):
        with pytest.raises(BuildError) as info:
            check_sampling(FakeTemplate(), sampled_sheet(None).record(), self.FILE)
        assert str(info.value) == (
            "templates/own.ipynb: the sheet shows no sampled study, though the inputs file's [sampling] table asks "
            "for one: the template does not pass input_sampling to its sheet. Set input_sampling = {} in the cell "
            "before the parameters cell and create the sheet with ck.Sheet(..., sampling=input_sampling); nothing "
            "was written."
        )

    def test_another_study(self):
        sheet = sampled_sheet(ASKED)
        sheet.sample_study(n=500, distribution="uniform", seed=3)  # the template's own, after the file's
        with pytest.raises(BuildError) as info:
            check_sampling(FakeTemplate(), sheet.record(), self.FILE)
        assert str(info.value) == (
            "templates/own.ipynb: the sheet's sampled study is 500 samples, uniform, seed 3, not the 20,000 "
            "samples, normal (k = 2), seed 11 the inputs file's [sampling] table asks for. Set input_sampling = {} "
            "in the cell before the parameters cell and create the sheet with ck.Sheet(..., "
            "sampling=input_sampling); nothing was written (and leave sheet.sample_study to runs by hand)."
        )


class KeepJobs(cf.Executor):
    """An executor that keeps each case it is sent and builds none (no kernel): each comes back failed."""

    def __init__(self):
        self.jobs = []

    def submit(self, fn, job, /):
        from calckit.workflow.case_job import BuiltCase

        self.jobs.append(pickle.loads(pickle.dumps(job)))  # as a worker elsewhere would get it
        future = cf.Future()
        future.set_result(BuiltCase(job.name, False, "kept by the test, not built"))
        return future


def test_a_batch_case_carries_the_sampling(tmp_path):
    """The batch's self-contained case holds the base file's [sampling] as plain data, for its worker's build."""
    from calckit.workflow.batch import run_batch

    cases = tmp_path / "cases.toml"
    cases.write_text('[[case]]\nname = "soft"\nstiffness = "650 kN/m"\n', encoding="utf-8")
    executor = KeepJobs()
    run_batch(
        "single_mass_harmonic", cases, tmp_path / "out", inputs=EXAMPLES / "harrow_creek_p101_sampled.toml",
        executor=executor,
    )  # fmt: skip
    (job,) = executor.jobs
    assert job.sampling == {"samples": 100_000, "distribution": "uniform", "seed": 2026}
    assert set(job.tolerances) == {"mass", "stiffness", "forcing_frequency"}


def test_diff_names_a_changed_sampled_study():
    """calckit diff says what moved the fingerprint when only the sampled study differs."""
    from calckit.workflow.diff import diff_records

    old = sampled_sheet(None).record()
    new = sampled_sheet(ASKED).record()
    report = diff_records(old, new, old_name="a.json", new_name="b.json")
    assert [(c.name, c.old, c.new) for c in report.details] == [
        ("sampled study", "none", "20,000 samples, normal (k = 2), seed 11")
    ]
    assert "Nothing shown on the sheets differs" not in report.text()
