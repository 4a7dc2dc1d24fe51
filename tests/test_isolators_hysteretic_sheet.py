"""The machine-on-isolators sheet with hysteretic mounts and a maximum service speed (issue 15, items 9 and 11).

Outside references, written out here (not taken from calckit):
* X and F_T from m x'' + k (1 + i eta) x = F0 e^{i Omega t}, solved with numpy.linalg.solve (complex 1 x 1);
* T_viscous = sqrt(1 + (2 zeta r)^2) / sqrt((1 - r^2)^2 + (2 zeta r)^2), S. S. Rao, Mechanical Vibrations,
  5th ed., sec. 9.10, from memory; zeta = eta / 2 gives the same resonant peak 1/eta (ibid. sec. 3.9, from memory);
* e_per = G / Omega_max, ISO 21940-11:2016, the grade referred to the maximum service speed, from memory;
* 1 rpm = 2 pi / 60 rad/s.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from calckit.errors import CalcError
from calckit.workflow import build_sheet

pytestmark = pytest.mark.slow

EXAMPLE = Path(__file__).parent.parent / "examples" / "harrow_creek_p101_isolators.toml"
RPM = 2 * math.pi / 60
ETA, W_MAX_RPM = 0.12, 1600.0


def _with(text: str, extra: dict[str, str]) -> str:
    """The example with lines replaced (name = value) or added after the running speed."""
    lines = text.splitlines()
    for name, value in extra.items():
        hit = [i for i, line in enumerate(lines) if line.split("=")[0].strip() == name]
        if hit:
            lines[hit[0]] = f"{name} = {value}"
        else:
            at = next(i for i, line in enumerate(lines) if line.startswith("running_speed"))
            lines.insert(at + 1, f"{name} = {value}")
    return "\n".join(lines) + "\n"


@pytest.fixture(scope="module")
def record(tmp_path_factory):
    root = tmp_path_factory.mktemp("hysteretic")
    inputs = root / "p101_elastomer.toml"
    inputs.write_text(
        _with(
            EXAMPLE.read_text(encoding="utf-8"),
            {
                "damping_model": '"hysteretic"',
                "loss_factor": str(ETA),
                "maximum_service_speed": f'"{W_MAX_RPM:g} rpm"',
                "damping_ratio": "0.01",
            },
        ),  # not used by the hysteretic model: given without a source
        encoding="utf-8",
    )
    return build_sheet("machine_on_isolators", inputs, root / "built").record


def _results(record):
    return {item["name"]: item["value"] for item in record["results"]}


def test_steady_state_against_complex_solve(record):
    res = _results(record)
    m, k, m_r, G = 1850.0, 720e3, 140.0, 6.3e-3  # the example's inputs
    w = 1480 * RPM
    U = m_r * G / (W_MAX_RPM * RPM)
    F0 = U * w * w
    X = complex(np.linalg.solve(np.array([[k * (1 + 1j * ETA) - m * w * w]]), np.array([F0 + 0j]))[0])
    assert res["e_per"] == pytest.approx(G / (W_MAX_RPM * RPM), rel=1e-3)
    assert res["F_0"] == pytest.approx(F0, rel=2e-3)
    assert res["X"] == pytest.approx(abs(X), rel=2e-3)
    assert res["F_T"] == pytest.approx(abs(k * (1 + 1j * ETA) * X), rel=2e-3)
    assert res["T"] == pytest.approx(abs(k * (1 + 1j * ETA) * X) / F0, rel=2e-3)


def test_viscous_model_beside_it(record):
    res = _results(record)
    r, zeta = res["r"], ETA / 2
    t_v = math.sqrt(1 + (2 * zeta * r) ** 2) / math.sqrt((1 - r * r) ** 2 + (2 * zeta * r) ** 2)
    assert res["zeta_eq"] == pytest.approx(zeta, rel=1e-12)
    assert res["T_viscous"] == pytest.approx(t_v, rel=2e-3)
    assert res["T_viscous"] > res["T"]  # far above resonance the viscous model transmits more
    assert any("Far above resonance the hysteretic mounts" in note for note in record["notes"])


def test_inputs_and_assumptions(record):
    names = {i["name"] for i in record["inputs"]}
    assert {"loss_factor", "maximum_service_speed"} <= names
    assert "damping_ratio" not in names  # not used by the hysteretic model, so not shown
    text = " ".join(record["assumptions"])
    assert "hysteretic damping" in text and r"\zeta = \eta_h / 2" in text
    assert "No maximum service speed is given" not in text


def test_unknown_damping_model_refused(tmp_path):
    inputs = tmp_path / "bad.toml"
    inputs.write_text(
        _with(EXAMPLE.read_text(encoding="utf-8"), {"damping_model": '"coulomb"'}), encoding="utf-8"
    )
    with pytest.raises(CalcError) as info:
        build_sheet("machine_on_isolators", inputs, tmp_path / "built")
    assert "unknown damping model 'coulomb'" in str(info.value)
