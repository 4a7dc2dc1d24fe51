"""Tests of calckit.explore: the what-if explorer, driven through the ipywidgets API without a browser.

Closed forms used as references (independent of the explorer's compiled derivation):
omega_n = sqrt(k/m), S. S. Rao, Mechanical Vibrations, 5th ed., sec. 2.2, from memory;
X = (F0/k) M(r, zeta) and phi, ibid. eqs. (3.30)-(3.31), through calckit.harmonic;
T and F_T = T F0, ibid. sec. 9.10, through calckit.harmonic.transmissibility.
"""

from __future__ import annotations

import json
import math
import re
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from calckit import harmonic
from calckit.errors import CalcError, InputsError, OverwriteError, UnitsError
from calckit.explore import SEPARATION_BASIS, Explorer, explore
from calckit.oscillator import Oscillator

ROOT = Path(__file__).parent.parent
EXAMPLE = ROOT / "examples" / "harrow_creek_p101.toml"
NOTEBOOK = ROOT / "examples" / "explore_p101.ipynb"


@pytest.fixture()
def p101() -> Explorer:
    return explore(EXAMPLE, "single_mass_harmonic")


def shown(ex: Explorer) -> dict[str, float]:
    """The SI values the results widget displays, by result name."""
    html = ex.controls["results"].value
    return {name: float(si) for name, si in re.findall(r'data-name="(\w+)" data-si="([^"]+)"', html)}


def verdicts(ex: Explorer) -> dict[str, tuple[str, float]]:
    """Verdict and margin of each check as the results widget displays them."""
    html = ex.controls["results"].value
    found = re.findall(r'data-check="([^"]+)" data-verdict="([^"]+)" data-margin="([^"]+)"', html)
    return {name: (verdict, float(margin)) for name, verdict, margin in found}


def closed_form(m, k, zeta, f0, w) -> dict[str, float]:
    wn = math.sqrt(k / m)  # Rao 5th ed. sec. 2.2, from memory
    r = w / wn
    return {
        "natural_frequency": wn,
        "frequency_ratio": r,
        "amplitude": f0 / k * float(harmonic.magnification(r, zeta)),  # Rao eq. (3.30)
        "phase_lag": float(harmonic.phase_angle(r, zeta)),  # Rao eq. (3.31)
        "transmissibility": float(harmonic.transmissibility(r, zeta)),  # Rao sec. 9.10
        "transmitted_force": f0 * float(harmonic.transmissibility(r, zeta)),
    }


RPM = 2 * math.pi / 60


class TestSliders:
    def test_sliders_have_units_and_log_scales(self, p101):
        """Labels carry the units; stiffness and frequency move on log scales."""
        sliders = p101.sliders
        assert [s.description for s in sliders.values()] == [
            "mass (kg)",
            "stiffness (kN/m)",
            "damping ratio",
            "force amplitude (kN)",
            "forcing frequency (rpm)",
        ]
        assert type(sliders["stiffness"]).__name__ == "FloatLogSlider"
        assert type(sliders["forcing_frequency"]).__name__ == "FloatLogSlider"
        assert type(sliders["mass"]).__name__ == "FloatSlider"
        # the frequency range spans the natural frequency (188 rpm) and the running speed
        lo, hi = 10 ** sliders["forcing_frequency"].min, 10 ** sliders["forcing_frequency"].max
        assert lo < 188 < 1480 < hi

    @pytest.mark.parametrize(
        "name, value, changed",
        [
            ("stiffness", 1500.0, "k"),
            ("mass", 2600.0, "m"),
            ("damping_ratio", 0.12, "zeta"),
            ("forcing_frequency", 230.0, "w"),
        ],
    )
    def test_move_matches_closed_forms(self, p101, name, value, changed):
        """After a slider move the displayed results equal the SDOF closed forms (references in the module notes)."""
        p101.sliders[name].value = value
        given = {"m": 1850.0, "k": 720e3, "zeta": 0.05, "f0": 900.0, "w": 1480 * RPM}
        given[changed] = {"k": value * 1e3, "w": value * RPM}.get(changed, value)
        expected = closed_form(**given)
        got = shown(p101)
        for key, reference in expected.items():
            assert got[key] == pytest.approx(reference, rel=1e-9), key
        assert p101.results.si()["amplitude"] == pytest.approx(expected["amplitude"], rel=1e-9)

    def test_amplitude_verdict_flips_at_the_limit(self, p101):
        """Just above and just below the speed where X equals the limit, the verdict flips; margins are
        (limit - X) / limit. The crossing comes from solving (1 - r^2)^2 + (2 zeta r)^2 = (X_st / X_lim)^2,
        Rao 5th ed. eq. (3.30), from memory."""
        m, k, zeta, f0, limit = 1850.0, 720e3, 0.05, 900.0, 0.05e-3
        wn = math.sqrt(k / m)
        ratio2 = (f0 / k / limit) ** 2
        # r^4 + (4 zeta^2 - 2) r^2 + 1 - ratio2 = 0, the root above resonance
        b = 4 * zeta**2 - 2
        r_cross = math.sqrt((-b + math.sqrt(b * b - 4 * (1 - ratio2))) / 2)
        rpm_cross = r_cross * wn / RPM
        seen = {}
        for factor in (0.99, 1.01):
            p101.sliders["forcing_frequency"].value = factor * rpm_cross
            x = closed_form(m, k, zeta, f0, p101.results.forcing_frequency)["amplitude"]
            verdict, margin = verdicts(p101)["amplitude"]
            assert margin == pytest.approx((limit - x) / limit * 100, rel=1e-6)
            seen[factor] = verdict
        assert seen == {0.99: "not met", 1.01: "met"}

    def test_speed_separation(self, p101):
        """Within +/-20 % of the natural frequency the separation check is not met (common practice, no source)."""
        assert verdicts(p101)["speed separation"][0] == "met"
        wn_rpm = math.sqrt(720e3 / 1850) / RPM
        p101.sliders["forcing_frequency"].value = 1.1 * wn_rpm
        verdict, margin = verdicts(p101)["speed separation"]
        separation = abs(p101.results.frequency_ratio - 1) * 100
        assert verdict == "not met"
        assert margin == pytest.approx((separation - 20) / 20 * 100, rel=1e-9)
        assert p101.results.check("speed separation").basis == SEPARATION_BASIS

    def test_plot_follows(self, p101):
        """The plot's curve is X(w) of the closed form at the new values, and the picture changes."""
        before = bytes(p101.controls["plot"].value)
        p101.sliders["stiffness"].value = 300.0
        curve = p101._artists["curve"]
        rpm, amplitude_mm = curve.get_xdata(), curve.get_ydata()
        r = rpm * RPM / math.sqrt(300e3 / 1850)
        reference = 900 / 300e3 * harmonic.magnification(r, 0.05) * 1000  # Rao eq. (3.30), in mm
        np.testing.assert_allclose(amplitude_mm, reference, rtol=1e-9)
        assert len(rpm) == 2000
        assert bytes(p101.controls["plot"].value) != before

    def test_move_keeps_significant_figures(self, p101):
        """A slider value is kept to four significant figures."""
        p101.sliders["stiffness"].value = 812.830516
        assert p101.values["stiffness"].magnitude == 812.8
        assert p101.changes() == (("stiffness", "720 kN/m", "812.8 kN/m"),)

    def test_back_to_start(self, p101):
        p101.set(mass="2 t", forcing_frequency="300 rpm")
        assert len(p101.changes()) == 2
        p101.controls["back"].click()
        assert p101.changes() == ()
        assert p101.sliders["mass"].value == 1850

    def test_no_derivation_on_a_move(self, p101, monkeypatch):
        """Symbolic once: a slider move evaluates compiled functions and never calls the engine."""

        def refuse(*args, **kwargs):
            raise AssertionError("the engine ran on a slider move")

        monkeypatch.setattr(Oscillator, "particular", refuse)
        monkeypatch.setattr(Oscillator, "response", refuse)
        p101.sliders["mass"].value = 2000.0
        p101.sliders["forcing_frequency"].value = 400.0
        assert p101.derivation.verified
        assert {s.name for s in p101.derivation.solution.free_symbols} == {"m", "c", "k", "F0", "w", "t"}


class TestKeep:
    def test_changes_only_the_moved_lines(self, p101, tmp_path):
        """The kept file is the inputs file with the moved values replaced, in their units, and one note."""
        p101.set(stiffness="900 kN/m", forcing_frequency=250)
        kept = p101.keep(tmp_path / "kept.toml")
        old = EXAMPLE.read_text(encoding="utf-8").splitlines()
        new = kept.path.read_text(encoding="utf-8").splitlines()
        assert new[0].startswith("# Kept from the what-if explorer")
        differ = [(a, b) for a, b in zip(old, new[1:], strict=True) if a != b]
        assert differ == [
            ('forcing_frequency = "1480 rpm"', 'forcing_frequency = "250 rpm"'),
            (
                'stiffness = "720 kN/m"        # six spring isolators together, vertical (invented)',
                'stiffness = "900 kN/m"        # six spring isolators together, vertical (invented)',
            ),
        ]
        assert kept.changes == (
            ("stiffness", "720 kN/m", "900 kN/m"),
            ("forcing_frequency", "1480 rpm", "250 rpm"),
        )

    def test_refuses_existing_file(self, p101, tmp_path):
        target = tmp_path / "mine.toml"
        target.write_text("# mine\n", encoding="utf-8")
        with pytest.raises(OverwriteError) as caught:
            p101.keep(target)
        assert str(caught.value) == (
            f"{target}: the file exists already. Keep to another name (for example mine_2.toml alongside it), "
            "or pass overwrite=True to replace it."
        )
        assert target.read_text(encoding="utf-8") == "# mine\n"
        p101.keep(target, overwrite=True)
        assert "Kept from the what-if explorer" in target.read_text(encoding="utf-8")

    def test_button_offers_a_name_alongside(self, p101, tmp_path):
        """The button refuses to replace a file, offers a free name beside it, and writes there on the next press."""
        target = tmp_path / "mine.toml"
        target.write_text("# mine\n", encoding="utf-8")
        p101.set(mass="2000 kg")
        p101.controls["path"].value = str(target)
        p101.controls["keep"].click()
        assert "the file exists already" in p101.controls["status"].value
        assert p101.controls["path"].value == str(tmp_path / "mine_2.toml")
        p101.controls["keep"].click()
        assert target.read_text(encoding="utf-8") == "# mine\n"
        assert 'mass = "2000 kg"' in (tmp_path / "mine_2.toml").read_text(encoding="utf-8")
        status = p101.controls["status"].value
        assert "<td>mass</td><td>1850 kg</td><td>2000 kg</td>" in status

    def test_direct_values_give_a_full_inputs_file(self, tmp_path):
        from calckit.inputs import check_keys, read_inputs
        from calckit.workflow import load_template

        ex = explore(
            mass="2 t",
            stiffness="45 lbf/in",
            damping_ratio="5 %",
            force_amplitude="100 N",
            forcing_frequency="3 Hz",
        )
        ex.set(damping_ratio=7)
        kept = ex.keep(tmp_path / "direct.toml")
        read = read_inputs(kept.path)
        check_keys(read, load_template("single_mass_harmonic").parameters, path=kept.path)
        assert read.values["damping_ratio"] == "7 %"
        assert ex.results.damping_ratio == pytest.approx(0.07, rel=1e-15)

    @pytest.mark.slow
    def test_kept_file_rebuilds_the_same_numbers(self, p101, tmp_path):
        """calckit's own build of the kept file gives the explorer's results and check margins."""
        p101.sliders["stiffness"].value = 812.830516
        p101.sliders["forcing_frequency"].value = 260.0
        p101.sliders["damping_ratio"].value = 0.08
        kept = p101.keep(tmp_path / "kept.toml")
        script = textwrap.dedent(
            f"""
            import json, sys, warnings
            warnings.simplefilter("ignore")
            from calckit.workflow import build_sheet
            result = build_sheet("single_mass_harmonic", {str(kept.path)!r}, {str(tmp_path / "built")!r})
            sys.stdout.write(json.dumps(result.record))
            """
        )
        done = subprocess.run(
            [sys.executable, "-c", script], capture_output=True, text=True, cwd=ROOT, timeout=600, check=False
        )
        assert done.returncode == 0, done.stderr[-3000:]
        record = json.loads(done.stdout)
        built = {item["name"]: item["value"] for item in record["results"]}
        mine = p101.results.si()
        common = sorted(set(built) & set(mine))
        assert {"amplitude", "natural_frequency", "frequency_ratio", "phase_lag"} <= set(common)
        for name in common:
            assert built[name] == pytest.approx(mine[name], rel=1e-12), name
        for check in record["checks"]:
            ours = p101.results.check(check["name"])
            assert check["verdict"] == ours.verdict
            assert check["value"] == pytest.approx(ours.value, rel=1e-12)
            # the record keeps margins to six decimals
            assert check["margin_percent"] == pytest.approx(ours.margin_percent, abs=1e-6)


class TestRefusals:
    def test_template_without_the_inputs(self):
        with pytest.raises(InputsError) as caught:
            explore(template="tuned_absorber")
        message = str(caught.value)
        assert message.endswith(
            "tuned_absorber.ipynb: the template declares no input for the mass (mass, m); the stiffness "
            "(stiffness, k); the damping (damping_ratio, zeta, damping, damping_coefficient or c). Explore a "
            "template of one mass on a spring and damper under a harmonic force (such as single_mass_harmonic), "
            "map its names with names={'mass': '...'}, or give the values directly."
        )

    def test_damping_coefficient_for_a_ratio_template(self):
        with pytest.raises(InputsError) as caught:
            explore(damping="3650 N*s/m")
        assert str(caught.value) == (
            "explore(damping=...): the template single_mass_harmonic takes the damping as a ratio (damping_ratio), "
            "not as a coefficient. Give damping_ratio=c/(2*sqrt(k*m)), here 0.05."
        )

    def test_value_of_the_wrong_kind(self):
        with pytest.raises(UnitsError) as caught:
            explore(mass="12 N/mm")
        assert str(caught.value) == (
            'explore(mass=...): expected a mass (kg, lb, ...), got 12 N/mm, which is a stiffness. Give a mass, for example "250 kg".'
        )

    def test_bad_value_in_the_file_points_at_its_line(self, tmp_path):
        bad = tmp_path / "bad.toml"
        bad.write_text(
            EXAMPLE.read_text(encoding="utf-8").replace('"1850 kg"', '"-1850 kg"'), encoding="utf-8"
        )
        with pytest.raises(InputsError) as caught:
            explore(bad)
        assert str(caught.value).startswith(f"{bad}, line 16, mass: must be greater than zero, got -1850 kg.")

    def test_forcing_not_one_harmonic(self, tmp_path):
        bad = tmp_path / "two.toml"
        text = EXAMPLE.read_text(encoding="utf-8").replace('"F0*cos(w*t)"', '"F0*cos(w*t) + F0*cos(2*w*t)"')
        bad.write_text(text, encoding="utf-8")
        with pytest.raises(InputsError, match="is not one harmonic at the forcing frequency"):
            explore(bad)

    def test_set_unknown_input(self, p101):
        with pytest.raises(InputsError, match='"rotor_mass" is not an input the explorer moves'):
            p101.set(rotor_mass="140 kg")

    def test_errors_are_calc_errors(self):
        with pytest.raises(CalcError):
            explore(template="no_such_template")


class TestStill:
    def test_without_ipywidgets(self, monkeypatch):
        """Without ipywidgets: no traceback, a still with a note, and moves and keeps still work."""
        monkeypatch.setitem(sys.modules, "ipywidgets", None)
        ex = explore(EXAMPLE)
        assert ex.widget is None and ex.sliders == {}
        bundle = ex._repr_mimebundle_()
        assert "application/vnd.jupyter.widget-view+json" not in bundle
        assert "ipywidgets is not available here" in bundle["text/html"]
        assert "<svg" in bundle["text/html"]
        assert "amplitude: 0.02058 mm <= 0.05 mm: met" in bundle["text/plain"]
        ex.set(forcing_frequency="250 rpm")
        assert ex.results.check("amplitude").verdict == "not met"

    def test_outside_a_kernel(self, p101):
        """A plain Python session gets the still and the text table, not the widget view."""
        bundle = p101._repr_mimebundle_()
        assert set(bundle) == {"text/html", "text/plain"}
        assert "the sliders need Jupyter with ipywidgets" in bundle["text/html"]
        assert repr(p101).startswith("What-if explorer (single_mass_harmonic)")


@pytest.mark.slow
def test_example_notebook_runs():
    """examples/explore_p101.ipynb runs headless from top to bottom (nbclient, in a child process)."""
    script = textwrap.dedent(
        f"""
        import warnings
        warnings.simplefilter("ignore")
        import nbformat
        from nbclient import NotebookClient
        from calckit.workflow import _kernel_env, _kernel_manager
        nb = nbformat.read({str(NOTEBOOK)!r}, as_version=4)
        NotebookClient(nb, timeout=300, kernel_name="python3", km=_kernel_manager(),
                       resources={{"metadata": {{"path": {str(NOTEBOOK.parent)!r}}}}}).execute(env=_kernel_env())
        errors = [o for c in nb.cells for o in c.get("outputs", []) if o.get("output_type") == "error"]
        assert not errors, errors
        print("ran", len(nb.cells))
        """
    )
    done = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, cwd=ROOT, timeout=600, check=False
    )
    assert done.returncode == 0, done.stderr[-3000:]
    assert "ran" in done.stdout
