"""A sampled study asked for by an inputs file, built: ``examples/harrow_creek_p101_sampled.toml``.

The run's one demo build (``conftest.shared_demo``: ``calckit demo`` builds it as
``p101-sampled``) of the worn-impeller P-101 example (Harrow Creek works, invented), whose ``[sampling]`` table asks for 100,000
samples, uniform over the bands, seed 2026. The sheet's fraction of samples meeting the
amplitude check is held against an outside reference: the same samples drawn with numpy's
``default_rng`` from the stated seed (each banded input uniform over its band,
independently, in the order the sheet lists its inputs) and put through the textbook
steady amplitude of one mass under a harmonic force, X = F0 / sqrt((k - m w^2)^2 + (c w)^2)
with c = 2 zeta sqrt(k m) (S. S. Rao, Mechanical Vibrations, 5th ed., sec. 3.4 and sec. 2.6,
from memory), in numpy. The input values and bands are read from the example with tomllib
and pint, not through calckit.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

import nbformat
import numpy as np
import pint
import pytest

from calckit.workflow.templates import load_template

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "harrow_creek_p101_sampled.toml"
TEMPLATE = "single_mass_harmonic"
UREG = pint.UnitRegistry()


@pytest.fixture(scope="module")
def built(tmp_path_factory, worker_id):
    """The demo's build of the example: its record (as data), notebook and page."""
    import json
    from types import SimpleNamespace

    from tests.conftest import run_shared_demo

    where, _run = run_shared_demo(tmp_path_factory, worker_id)
    folder = where / "demo" / "p101-sampled"
    record = json.loads((folder / f"{TEMPLATE}.json").read_text(encoding="utf-8"))
    return SimpleNamespace(
        record=record, notebook=folder / f"{TEMPLATE}.ipynb", html=folder / f"{TEMPLATE}.html"
    )


def si(text: str, unit: str) -> float:
    return float(UREG.Quantity(text).to(unit).magnitude)


def book_amplitude(F0, m, k, zeta, w):
    """X = F0 / sqrt((k - m w^2)^2 + (c w)^2), c = 2 zeta sqrt(k m) (Rao, 5th ed., secs. 3.4, 2.6, from memory)."""
    c = 2 * zeta * np.sqrt(k * m)
    return F0 / np.sqrt((k - m * w**2) ** 2 + (c * w) ** 2)


def test_pass_fraction_against_numpy_and_the_closed_form(built):
    data = tomllib.loads(EXAMPLE.read_text(encoding="utf-8"))
    sampling, bands = data["sampling"], data["tolerances"]
    values = {**data["machine"], **data["mounting"], **data["acceptance"]}
    nominal = {
        "mass": si(values["mass"], "kg"),
        "stiffness": si(values["stiffness"], "N/m"),
        "forcing_frequency": si(values["forcing_frequency"], "rad/s"),
    }
    F0 = si(values["force_amplitude"]["value"], "N")
    zeta = values["damping_ratio"]["value"]
    limit = si(values["amplitude_limit"], "m")
    order = [item["name"] for item in built.record["inputs"] if item["name"] in bands]
    assert order == ["mass", "stiffness", "forcing_frequency"]  # the inputs' order on the sheet
    rng = np.random.default_rng(sampling["seed"])
    drawn = {}
    for name in order:
        half = float(bands[name].rstrip("% ")) / 100 * nominal[name]
        drawn[name] = rng.uniform(nominal[name] - half, nominal[name] + half, sampling["samples"])
    X = book_amplitude(F0, drawn["mass"], drawn["stiffness"], zeta, drawn["forcing_frequency"])
    reference = float(np.mean(X <= limit))
    assert 0.05 < reference < 0.95  # the bands straddle the limit: the fraction says something

    study = built.record["tolerances"]
    assert study["samples"] == {"n": 100_000, "distribution": "uniform", "seed": 2026, "k": 3.0}
    (amplitude,) = [c for c in study["checks"] if c["name"] == "amplitude"]
    assert (
        abs(amplitude["pass_fraction"] - reference) <= 2 / sampling["samples"]
    )  # the same samples, bar rounding
    # nominal met, the worst corner (light, slow, stiff) not, in the closed form as on the sheet
    corner = book_amplitude(F0, 0.9 * nominal["mass"], 1.15 * nominal["stiffness"], zeta,
                            0.95 * nominal["forcing_frequency"])  # fmt: skip
    at_nominal = book_amplitude(F0, nominal["mass"], nominal["stiffness"], zeta, nominal["forcing_frequency"])
    assert at_nominal <= limit < corner
    assert (amplitude["nominal_verdict"], amplitude["worst_verdict"]) == ("met", "not met")


def test_the_request_reaches_the_sheet(built):
    """The injected cell hands the table to the template as input_sampling; the sheet states the study."""
    from html import unescape

    notebook = nbformat.read(built.notebook, as_version=4)
    injected = notebook.cells[load_template(TEMPLATE).parameters_cell + 1].source
    assert injected.endswith(
        "input_sampling = {'samples': 100000, 'distribution': 'uniform', 'seed': 2026}\n"
    )
    page = unescape(built.html.read_text(encoding="utf-8"))
    assert "100,000 samples" in page and "seed 2026" in page
