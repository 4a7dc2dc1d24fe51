"""The calculation templates, built from their Harrow Creek example inputs, against outside references.

Every template is built once through :func:`calckit.workflow.build_sheet` (a fresh kernel
each, about ten seconds), and once more with an input changed so that one acceptance
check flips (met to not met, or the other way). The builds are shared by the tests of a module-scoped
fixture. Each reference is named beside its use.

The notebooks themselves also run under nbval, in lax mode because figures (SVG) and
timings change from run to run::

    python -m pytest --nbval-lax templates/
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
import sympy as sp

from calckit.core.units import angular_frequency, quantity, to_si
from calckit.errors import CalcError, CellError
from calckit.workflow import build_sheet, bundled_templates, demos
from calckit.sheet import read_record
from calckit.workflow.inputs import read_inputs

pytestmark = pytest.mark.slow

ROOT = Path(__file__).parent.parent
EXAMPLES = ROOT / "examples"
G_N = 9.80665  # standard gravity g_n, m/s^2: a defined constant (3rd CGPM, 1901), the conventional value

#: template -> (example inputs, {input changed: new value}, check that flips, (verdict before, after))
CASES = {
    "machine_on_isolators": (
        "harrow_creek_p101_isolators.toml",
        {"isolator_stiffness": '"20 MN/m"'},
        "isolation efficiency",
        ("met", "not met"),
    ),
    "equipment_on_vibrating_floor": (
        "harrow_creek_ic301_floor.toml",
        {"mount_stiffness": '"3.2 MN/m"'},
        "equipment velocity",
        ("met", "not met"),
    ),
    "arbitrary_forcing": (
        "harrow_creek_ps512_surge.toml",
        {"F0": '"3 kN"'},
        "displacement",
        ("met", "not met"),
    ),
    # the example's frame resonates with its 13th harmonic; a frame four times stiffer, with harmonics
    # kept past its natural frequency, leaves every significant harmonic (1 to 8) well clear
    "periodic_load": (
        "harrow_creek_sp601_stroke.toml",
        {"frame_stiffness": '"40 MN/m"', "harmonics": "36"},
        "separation",
        ("not met", "met"),
    ),
    # the slam 25 % harder on an undamped support (the moved build also meets the undamped closed form)
    "shock_pulse": (
        "harrow_creek_ps516_slam.toml",
        {"pulse_amplitude": '"15 kN"', "damping_ratio": "0"},
        "displacement",
        ("met", "not met"),
    ),
    # mounts twice as stiff put the skid's natural frequency (11.3 Hz) on the floor's ringing (11.5 Hz)
    "measured_load": (
        "harrow_creek_b402_trip.toml",
        {"mount_stiffness": '"7 MN/m"'},
        "equipment acceleration",
        ("met", "not met"),
    ),
    # mounts rated 7.2 kN: the heaviest-loaded mount, M6 under the offset motor (7.58 kN), is over its rating
    "machine_on_mounts": (
        "harrow_creek_b207_mounts.toml",
        {"mount_rated_load": '"7.2 kN"'},
        "static load of M6",
        ("met", "not met"),
    ),
}

#: template -> (example inputs, the input holding the running or forcing frequency in rpm)
IN_HZ = {
    "machine_on_isolators": ("harrow_creek_p101_isolators.toml", "running_speed"),
    "equipment_on_vibrating_floor": ("harrow_creek_ic301_floor.toml", "floor_frequency"),
}


def _changed(text: str, name: str, value: str) -> str:
    """The inputs file with *name*'s value line replaced (its band in a [tolerances] table kept)."""
    table, lines = "", []
    for line in text.splitlines():
        table = line.split("]")[0].strip("[ ") if line.startswith("[") else table
        if table != "tolerances" and line.split("=")[0].strip() == name:
            lines.append(line)
    assert len(lines) == 1, name
    old = lines[0]
    return text.replace(old, f"{name} = {value}")


@pytest.fixture(scope="module")
def built(tmp_path_factory, worker_id):
    """Each template built from its example, and again with one input changed: {template: (base, moved)}.

    An example that ``calckit demo`` builds is read from the run's one demo build (``conftest.shared_demo``),
    built once for the CLI, print and template tests; ``built.folder[template]`` holds its files."""
    from tests.conftest import run_shared_demo

    root = tmp_path_factory.mktemp("templates")
    by_example = {(d.template, d.inputs.name): d.name for d in demos()}

    class Built(dict):
        """Built on first use, so a run of one template's tests builds that template alone."""

        def __missing__(self, template):
            example, changes, *_rest = CASES[template]
            source = EXAMPLES / example
            # an inputs file names its data files relative to its folder: the moved one sits beside it
            moved_inputs = root / f"{template}_moved.toml"
            text = source.read_text(encoding="utf-8")
            for name, value in changes.items():
                text = _changed(text, name, value)
            moved_inputs.write_text(text, encoding="utf-8")
            for data in EXAMPLES.glob("*.csv"):
                if not (root / data.name).exists():
                    (root / data.name).write_bytes(data.read_bytes())
            demo = by_example.get((template, example))
            if demo is not None:  # the run's one demo build of this example
                where, _run = run_shared_demo(tmp_path_factory, worker_id)
                self.folder[template] = where / "demo" / demo
                base_record = read_record(self.folder[template] / f"{template}.json").to_dict()
            else:
                self.folder[template] = root / template
                base_record = build_sheet(template, source, root / template).record
            moved = build_sheet(template, moved_inputs, root / f"{template}_moved")
            self[template] = (base_record, moved.record)
            return self[template]

    built = Built()
    built.folder = {}  # template -> the folder of its example's built files ({template}.html ...)
    return built


def _inputs(example: str) -> dict:
    """The example's inputs, flattened out of their tables, values without their sources."""
    return dict(read_inputs(EXAMPLES / example).values)


def _si(values: dict, name: str) -> float:
    return float(to_si(quantity(values[name], name), name).magnitude)


def _results(record: dict) -> dict:
    """Results by name: the SI value, or the text of a formula."""
    return {
        item["name"]: item["text"] if item["value"] is None else item["value"] for item in record["results"]
    }


def _check(record: dict, prefix: str) -> dict:
    found = [c for c in record["checks"] if c["name"].startswith(prefix)]
    assert len(found) == 1, [c["name"] for c in record["checks"]]
    return found[0]


def _book_transmissibility(r: float, zeta: float) -> float:
    """Rao, Mechanical Vibrations, 5th ed., eq. (3.68) / sec. 9.10, from memory."""
    return math.sqrt((1 + (2 * zeta * r) ** 2) / ((1 - r**2) ** 2 + (2 * zeta * r) ** 2))


class TestBundled:
    def test_templates_listed(self):
        """The four templates are bundled by name."""
        assert set(CASES) <= set(bundled_templates())

    def test_demos_build_them(self):
        """examples/demos.toml lists each template with its example inputs."""
        pairs = {(d.template, d.inputs.name) for d in demos()}
        for template, (example, *_rest) in CASES.items():
            assert (template, example) in pairs

    def test_demos_cover_every_template(self):
        """calckit demo builds every bundled template, each from an inputs file that exists."""
        listed = demos()
        assert {d.template for d in listed} == set(bundled_templates())
        assert all(d.inputs.is_file() for d in listed)
        assert ("tuned_absorber", "harrow_creek_b201_absorber.toml") in {
            (d.template, d.inputs.name) for d in listed
        }

    @pytest.mark.parametrize("template", sorted(CASES))
    def test_built_and_verified(self, built, template):
        """The example builds, carries the caution, and every derivation is verified by substitution."""
        record, _ = built[template]
        assert record["caution"]
        assert record["derivations"] and all(d["verified"] for d in record["derivations"])
        assert record["references"] and record["assumptions"]

    @pytest.mark.parametrize("template", sorted(CASES))
    def test_check_flips(self, built, template):
        """Changed inputs turn one acceptance check over, so the checks can come out either way."""
        base, moved = built[template]
        _, _, name, (before, after) = CASES[template]
        assert _check(base, name)["verdict"] == before
        assert _check(moved, name)["verdict"] == after


#: inputs an example leaves without a source: tests/test_explore.py compares their lines, as written,
#: with the lines the explorer keeps (its keep cannot yet rewrite an input written with a source)
PLAIN = {"machine_on_isolators": {"balance_grade", "isolator_stiffness"}}


class TestSources:
    """Each template passes the inputs file's sources to its sheet; the examples name one for every input."""

    @pytest.mark.parametrize("template", sorted(bundled_templates()))
    def test_template_passes_sources(self, template):
        """The cell before the parameters cell sets input_sources = {}; the sheet is made with it."""
        import nbformat

        notebook = nbformat.read(bundled_templates()[template], as_version=4)
        cells = [c.source for c in notebook.cells if c.cell_type == "code"]
        first = next(i for i, c in enumerate(notebook.cells) if "parameters" in c.metadata.get("tags", []))
        before = "".join(c.source for c in notebook.cells[:first] if c.cell_type == "code")
        assert "\ninput_sources = {}" in before
        assert sum("ck.Sheet(" in c for c in cells) == 1
        assert sum("    sources=input_sources,\n" in c for c in cells) == 1

    @pytest.mark.parametrize("template", sorted(CASES))
    def test_every_input_names_its_source(self, built, template):
        """On each example's sheet no input falls back to the inputs file's name: each has a source
        from the file or a basis; an input the moved case rewrote without one shows its file again."""
        base, moved = built[template]
        example, changes, *_ = CASES[template]
        sources = dict(read_inputs(EXAMPLES / example).sources)
        shown = {i["name"]: i["source"] for i in base["inputs"]}
        assert {n for n, s in shown.items() if s == example} == PLAIN.get(template, set())
        # a group input ("x = 0.18 m; y = 0.03 m; z = 0.62 m") is shown through its members, each described
        # "... (name)" with the group's source, as the build itself reads it (calckit.workflow.build)
        members = {}
        for i in base["inputs"]:
            group = str(i["description"]).rpartition("(")[2].rstrip(")")
            members.setdefault(group, set()).add(i["source"])
        assert all(shown[name] == source if name in shown else members.get(name) == {source}
                   for name, source in sources.items())
        moved_shown = {i["name"]: i["source"] for i in moved["inputs"]}
        assert {n for n, s in moved_shown.items() if s == f"{template}_moved.toml"} == set(
            changes
        ) | PLAIN.get(template, set())


class TestFrequencyInHz:
    """The running or forcing frequency given in Hz gives the sheet of the same frequency in rpm."""

    @pytest.mark.parametrize("template", sorted(IN_HZ))
    def test_same_ratio_and_transmissibility(self, built, template, tmp_path):
        """1 rpm = 1/60 Hz (a cycle per revolution, 60 s a minute); r and T must not move, and neither
        may a check, when the same frequency is written in the other unit."""
        example, name = IN_HZ[template]
        rpm = _inputs(example)[name]
        number, unit = rpm.split()
        assert unit == "rpm"
        hz = f"{float(number) / 60!r} Hz"
        inputs = tmp_path / f"{template}_hz.toml"
        inputs.write_text(
            _changed((EXAMPLES / example).read_text(encoding="utf-8"), name, f'"{hz}"'), encoding="utf-8"
        )
        record = build_sheet(template, inputs, tmp_path / "built").record
        assert [i["text"] for i in record["inputs"] if i["name"] == name] == [hz]
        base, got = _results(built[template][0]), _results(record)
        for result in ("r", "T"):
            assert got[result] == pytest.approx(base[result], rel=1e-9), result
        # and against the book form, so that a frequency ratio 2 pi too small in both builds would fail
        v = _inputs(example)
        mass, stiffness = (
            ("machine_mass", "isolator_stiffness")
            if template == "machine_on_isolators"
            else ("equipment_mass", "mount_stiffness")
        )
        r = float(number) / 60 * 2 * math.pi / math.sqrt(_si(v, stiffness) / _si(v, mass))
        assert got["r"] == pytest.approx(r, rel=1e-3)
        assert got["T"] == pytest.approx(_book_transmissibility(r, v["damping_ratio"]), rel=2e-3)
        assert [(c["name"], c["verdict"]) for c in record["checks"]] == [
            (c["name"], c["verdict"]) for c in built[template][0]["checks"]
        ]


class TestMachineOnIsolators:
    example = "harrow_creek_p101_isolators.toml"

    def test_severity_zone(self, built):
        """V_rms = Omega X / sqrt(2) with X from the book's unbalance response (Rao 5th ed., sec. 3.7, from
        memory), judged by ISO 10816-3:2009 Table A.2, group 2 flexible: A/B 2.3, B/C 4.5 mm/s (from memory)."""
        v, record = _inputs(self.example), built["machine_on_isolators"][0]
        res, check = _results(record), _check(record, "machine vibration severity")
        m, k, zeta = _si(v, "machine_mass"), _si(v, "isolator_stiffness"), v["damping_ratio"]
        W = angular_frequency(quantity(v["running_speed"], "W"), "W")
        U = _si(v, "rotor_mass") * _si(v, "balance_grade") / W  # G = e Omega at the running speed
        X = U * W**2 / math.sqrt((k - m * W**2) ** 2 + (2 * zeta * math.sqrt(k * m) * W) ** 2)
        assert res["V_rms"] == pytest.approx(W * X / math.sqrt(2), rel=3e-3)
        assert res["severity_zone"] == "zone A" and W * X / math.sqrt(2) < 2.3e-3
        assert check["limit"] == pytest.approx(4.5) and check["unit"] == "mm/s"
        assert "ISO 10816-3:2009, Annex A, Table A.2 (from memory)" in check["basis"]
        assert "zone found: A" in check["basis"]

    def test_natural_frequency_and_deflection(self, built):
        """omega_n = sqrt(k/m) and delta_st = m g / k, computed here from the inputs."""
        v, res = _inputs(self.example), _results(built["machine_on_isolators"][0])
        m, k = _si(v, "machine_mass"), _si(v, "isolator_stiffness")
        assert res["omega_n"] == pytest.approx(math.sqrt(k / m), rel=1e-3)
        assert res["delta_st"] == pytest.approx(m * G_N / k, rel=1e-3)

    def test_unbalance_force_from_grade(self, built):
        """F_0 = m_r e_per Omega^2 with e_per = G / Omega (ISO 21940-11, from memory)."""
        v, res = _inputs(self.example), _results(built["machine_on_isolators"][0])
        w = angular_frequency(quantity(v["running_speed"], "speed"), "speed")
        F0 = _si(v, "rotor_mass") * _si(v, "balance_grade") / w * w**2
        assert res["F_0"] == pytest.approx(F0, rel=1e-3)

    def test_transmissibility_and_efficiency(self, built):
        """T against the book form (Rao 5th ed., sec. 9.10, from memory); eta = 1 - T."""
        v, res = _inputs(self.example), _results(built["machine_on_isolators"][0])
        w = angular_frequency(quantity(v["running_speed"], "speed"), "speed")
        r = w / math.sqrt(_si(v, "isolator_stiffness") / _si(v, "machine_mass"))
        T = _book_transmissibility(r, v["damping_ratio"])
        assert res["r"] == pytest.approx(r, rel=1e-3)
        assert res["T"] == pytest.approx(T, rel=2e-3)
        assert res["eta"] == pytest.approx(1 - T, rel=1e-3)  # recorded as a fraction (SI of percent)

    def test_worst_case_over_the_example_bands(self, built):
        """The example's bands (mass +-10 %, stiffness +-15 %, speed 1300 to 1500 rpm): the worst isolation
        efficiency is 1 - T at the worst of the 8 corners, the book's T (Rao 5th ed., sec. 9.10, from memory)
        with numpy; the run-up's peak, a procedure's result, is said not to be evaluated."""
        record = built["machine_on_isolators"][0]
        study = {c["name"]: c for c in record["tolerances"]["checks"]}
        zeta = _inputs(self.example)["damping_ratio"]
        corners = [
            (1 - _book_transmissibility(n * 2 * math.pi / 60 / math.sqrt(k / m), zeta)) * 100
            for m in (1665.0, 2035.0) for k in (612e3, 828e3) for n in (1300.0, 1500.0)
        ]  # fmt: skip
        efficiency = study["isolation efficiency"]
        assert efficiency["worst_value"] == pytest.approx(min(corners), rel=1e-6)
        assert efficiency["governing"] == pytest.approx({"machine_mass": 1665.0, "isolator_stiffness": 828.0,
                                                         "running_speed": 1300.0})  # fmt: skip
        assert (efficiency["nominal_verdict"], efficiency["worst_verdict"]) == ("met", "met")
        assert study["motion during run-up"] == {
            "name": "motion during run-up", "evaluated": False, "reason": "peak_run_up is from a numerical procedure"
        }  # fmt: skip
        html = (built.folder["machine_on_isolators"] / "machine_on_isolators.html").read_text(encoding="utf-8")
        assert "Tolerances: worst case and sensitivities" in html and "Tornado chart" in html
        assert "720 kN/m ± 15 %" in html and "1480 rpm (band 1300 to 1500 rpm)" in html

    def test_run_up_against_solve_ivp(self, built):
        """The stepped run-up's largest motion against scipy.integrate.solve_ivp of the true linear ramp."""
        from scipy.integrate import solve_ivp

        v, res = _inputs(self.example), _results(built["machine_on_isolators"][0])
        m, k, zeta = _si(v, "machine_mass"), _si(v, "isolator_stiffness"), v["damping_ratio"]
        c = 2 * zeta * math.sqrt(k * m)
        W = angular_frequency(quantity(v["running_speed"], "speed"), "speed")
        t_ru = _si(v, "run_up_time")
        U = _si(v, "rotor_mass") * _si(v, "balance_grade") / W
        alpha = W / t_ru

        def rhs(t, y):
            f = U * (alpha * t) ** 2 * math.cos(alpha * t * t / 2)
            return [y[1], (f - c * y[1] - k * y[0]) / m]

        times = np.linspace(0, t_ru, 40001)
        sol = solve_ivp(rhs, (0, t_ru), [0.0, 0.0], t_eval=times, rtol=1e-9, atol=1e-14, max_step=1e-3)
        peak = np.max(np.abs(sol.y[0]))
        assert res["peak_run_up"] == pytest.approx(peak, rel=0.02)

    def test_fixed_speed_separation_as_before(self, built):
        """The example gives one running speed and no orders: 1x at 1480 rpm against omega_n = sqrt(k/m), one
        row, the plain basis (common practice, no source), and the interference diagram on the sheet."""
        v, record = _inputs(self.example), built["machine_on_isolators"][0]
        check = _check(record, "speed separation")
        wn = math.sqrt(_si(v, "isolator_stiffness") / _si(v, "machine_mass"))
        w = angular_frequency(quantity(v["running_speed"], "speed"), "speed")
        assert check["value"] == pytest.approx((w / wn - 1) * 100, rel=2e-3) and check["verdict"] == "met"
        (table,) = [t for t in record["tables"] if t["caption"].startswith("Separation of every mode")]
        assert [row[2] for row in table["rows"]] == ["1x"]

    def test_verdict_flips_when_the_speed_range_is_widened(self, built, tmp_path):
        """The same pump given a drive from 150 rpm (one build): 1x crosses the isolators' natural frequency at
        60 omega_n / (2 pi) rpm, omega_n = sqrt(k/m) (Rao 5th ed., sec. 2.2, from memory), which now lies in the
        range; the least separation is 0 and the check turns from met to not met. 2x and 6x cross below it."""
        base = built["machine_on_isolators"][0]
        text = (  # top-level keys, before the file's tables
            'minimum_running_speed = "150 rpm"\nmaximum_running_speed = "1480 rpm"\n'
            'excitation_orders = "1, 2, 6 vane passing"\n'
        ) + (EXAMPLES / self.example).read_text(encoding="utf-8")
        inputs = tmp_path / "p101_widened.toml"
        inputs.write_text(text, encoding="utf-8")
        record = build_sheet("machine_on_isolators", inputs, tmp_path / "built").record
        before, after = _check(base, "speed separation"), _check(record, "speed separation")
        assert (before["verdict"], after["verdict"]) == ("met", "not met")
        assert after["value"] == 0 and "over the whole speed range" in after["basis"]
        v, res = _inputs(self.example), _results(record)
        wn = math.sqrt(_si(v, "isolator_stiffness") / _si(v, "machine_mass"))
        assert res["speed_separation_crossing"] == pytest.approx(wn, rel=1e-3)  # omega_n / 1, as shown
        (table,) = [t for t in record["tables"] if t["caption"].startswith("Separation of every mode")]
        crossing_rpm = [float(row[4]) for row in table["rows"]]
        assert crossing_rpm == pytest.approx([60 * wn / (2 * math.pi) / k for k in (1, 2, 6)], rel=1e-3)
        assert [row[7] for row in table["rows"]] == ["not met", "met", "met"]
        assert any(
            note.startswith("Crossings inside the speed range 150 rpm to 1480 rpm")
            for note in record["notes"]
        )
        # the other checks stay as they were: isolation is judged at the running speed
        others = [(c["name"], c["verdict"]) for c in record["checks"] if c["name"] != "speed separation"]
        assert others == [
            (c["name"], c["verdict"]) for c in base["checks"] if c["name"] != "speed separation"
        ]


    def test_variable_speed_example_reads(self):
        """The P-105 example (a pump on a variable-speed drive, built by hand for its sheet, not here) gives
        the template's parameters, its speed range and orders read as a SpeedRange (no kernel)."""
        from calckit.physics.speed_range import SpeedRange
        from calckit.workflow.inputs import check_keys
        from calckit.workflow.templates import load_template

        template = load_template("machine_on_isolators")
        inputs = read_inputs(EXAMPLES / "harrow_creek_p105_vfd.toml")
        check_keys(inputs, template.parameters, path="harrow_creek_p105_vfd.toml", optional=template.optional_inputs)
        v = dict(inputs.values)
        speeds = SpeedRange(v["minimum_running_speed"], v["maximum_running_speed"], orders=v["excitation_orders"])
        assert speeds.labels == ("1x", "2x", "7x vane passing")
        assert speeds.require(v["running_speed"], "running_speed") == speeds.high


class TestEquipmentOnVibratingFloor:
    example = "harrow_creek_ic301_floor.toml"

    def test_against_book_base_excitation(self, built):
        """X/Y, V = omega X and A = omega^2 X against Rao 5th ed., sec. 3.6.1 (from memory)."""
        v, res = _inputs(self.example), _results(built["equipment_on_vibrating_floor"][0])
        m, k, zeta = _si(v, "equipment_mass"), _si(v, "mount_stiffness"), v["damping_ratio"]
        w = angular_frequency(quantity(v["floor_frequency"], "f"), "f")
        wn = math.sqrt(k / m)
        Y = _si(v, "floor_velocity") / w
        T = _book_transmissibility(w / wn, zeta)
        assert res["omega_n"] == pytest.approx(wn, rel=1e-3)
        assert res["T"] == pytest.approx(T, rel=2e-3)
        assert res["V"] == pytest.approx(w * T * Y, rel=2e-3)
        assert res["A"] == pytest.approx(w**2 * T * Y, rel=2e-3)
        Z = (w / wn) ** 2 * Y / math.sqrt((1 - (w / wn) ** 2) ** 2 + (2 * zeta * w / wn) ** 2)
        assert res["Z"] == pytest.approx(Z, rel=2e-3)  # Rao 5th ed., sec. 3.6.2, from memory

    def test_criterion_curve_band_by_band(self, built):
        """The worst band's rms velocity and its limit: each harmonic through the book transmissibility, the
        band's rms as the rms of the sampled signal (numpy), the limit 4 x the ISO 2631-2:1989 base curve."""
        v, record = _inputs(self.example), built["equipment_on_vibrating_floor"][0]
        res, check = _results(record), _check(record, "criterion curve, worst band")
        m, k, zeta = _si(v, "equipment_mass"), _si(v, "mount_stiffness"), v["damping_ratio"]
        f_n = math.sqrt(k / m) / (2 * math.pi)
        f_1 = angular_frequency(quantity(v["floor_frequency"], "f"), "f") / (2 * math.pi)  # 740 rpm, 12.33 Hz
        assert v["floor_velocity_convention"] == "peak" and v["criterion_curve"] == "ISO office"
        # the 12.5 Hz band (11.2 Hz to 14.1 Hz, IEC 61260-1 base-ten edges) holds the running-speed harmonic alone
        V_1 = _book_transmissibility(f_1 / f_n, zeta) * _si(v, "floor_velocity")
        t = np.linspace(0.0, 100 / f_1, 200_001)
        sampled_rms = np.sqrt(np.mean((V_1 * np.sin(2 * np.pi * f_1 * t)) ** 2))
        assert res["V_band"] == pytest.approx(sampled_rms, rel=2e-3)
        # ISO 2631-2:1989 base curve (z-axis) above 8 Hz: a = 5e-3 m/s^2 * f / 8 Hz, so v = 5e-3 / (2 pi 8 Hz);
        # offices 4 x the base curve, Annex A, Table A.1 (from memory)
        assert check["limit"] == pytest.approx(4 * 5e-3 / (2 * math.pi * 8) * 1e6, rel=1e-9)  # um/s
        assert check["unit"] == "um/s" and check["verdict"] == "met"
        assert "ISO 2631-2:1989, Annex A, Table A.1" in check["basis"] and "(from memory)" in check["basis"]
        table = next(t for t in record["tables"] if t["caption"].startswith("One-third-octave bands"))
        assert [row[0] for row in table["rows"]] == ["12.5", "25", "40"]  # 1x, 2x, 3x of 740 rpm

    def test_limit_compared_in_its_convention(self, built):
        """The maker's limit is a peak: the check says so and compares the peak velocity V = omega X."""
        record = built["equipment_on_vibrating_floor"][0]
        check = _check(record, "equipment velocity")
        assert check["basis"].endswith("; compared as peak")
        assert check["value"] == pytest.approx(_results(record)["V"] * 1000, rel=1e-3)  # mm/s, as carried


class TestArbitraryForcing:
    example = "harrow_creek_ps512_surge.toml"

    def _reference(self):
        from scipy.integrate import solve_ivp

        v = _inputs(self.example)
        m, k, zeta = _si(v, "mass"), _si(v, "stiffness"), v["damping_ratio"]
        c = 2 * zeta * math.sqrt(k * m)
        F0, F1, a = _si(v, "F0"), _si(v, "F1"), _si(v, "a")
        w = angular_frequency(quantity(v["w"], "w"), "w")
        assert v["forcing"] == "F0*exp(-a*t)*cos(w*t) + F1*(1 - exp(-a*t))"  # the forcing written out below

        def rhs(t, y):
            f = F0 * math.exp(-a * t) * math.cos(w * t) + F1 * (1 - math.exp(-a * t))
            return [y[1], (f - c * y[1] - k * y[0]) / m]

        t_end = _si(v, "duration")
        times = np.linspace(0, t_end, 3001)
        y0 = [_si(v, "initial_displacement"), _si(v, "initial_velocity")]
        return times, solve_ivp(rhs, (0, t_end), y0, t_eval=times, rtol=1e-10, atol=1e-14).y[0]

    def test_solution_against_solve_ivp(self, built):
        """The derived x(t) on the sheet against scipy.integrate.solve_ivp of the same equation."""
        record = built["arbitrary_forcing"][0]
        (derivation,) = record["derivations"]
        assert derivation["verified"]
        t = sp.Symbol("t", real=True)
        x = sp.lambdify(t, sp.sympify(derivation["solution"], locals={"t": t}), "numpy")
        times, reference = self._reference()
        assert np.max(np.abs(x(times) - reference)) <= 1e-6 * np.max(np.abs(reference))

    def test_peak_and_residual(self, built):
        """The largest displacement against solve_ivp; the numerical residual is round-off."""
        res = _results(built["arbitrary_forcing"][0])
        _, reference = self._reference()
        assert res["peak_displacement"] == pytest.approx(np.max(np.abs(reference)), rel=1e-3)
        assert res["residual"] < 1e-9

    def test_forcing_that_is_not_a_force(self, tmp_path):
        """A forcing with the wrong unit is refused with a calckit error naming the input and what to do."""
        text = _changed((EXAMPLES / self.example).read_text(encoding="utf-8"), "forcing", '"F0*t"')
        bad = tmp_path / "bad.toml"
        bad.write_text(text, encoding="utf-8")
        with pytest.raises(CellError) as caught:
            build_sheet("arbitrary_forcing", bad, tmp_path / "out")
        assert isinstance(caught.value, CalcError)
        message = str(caught.value)
        assert "forcing" in message and "does not give a force" in message and "cos(2*w*t)" in message

    def test_forcing_in_names_of_ones_own(self, tmp_path):
        """forcing_parameters names the forcing's parameters; Hz is read as cycles (2 pi rad); the peak
        agrees with scipy.integrate.solve_ivp of the same equation written out here."""
        from scipy.integrate import solve_ivp

        text = (EXAMPLES / self.example).read_text(encoding="utf-8")
        text = _changed(text, "forcing", '"P*exp(-t/tau)*sin(Omega*t)"')
        text = "\n".join(
            line for line in text.splitlines() if line.split("=")[0].strip() not in ("F0", "F1", "a", "w")
        )
        text = text.replace(
            "[start]",
            '[own]\nforcing_parameters = { value = "P = 1.5 kN; tau = 0.3 s; Omega = 9 Hz", '
            'source = "Surge analysis HCW-HYD-012 rev A (invented)" }\n\n[start]',
        )
        inputs = tmp_path / "own.toml"
        inputs.write_text(text, encoding="utf-8")
        build_sheet("arbitrary_forcing", inputs, tmp_path / "out")
        record = json.loads((tmp_path / "out" / "arbitrary_forcing.json").read_text(encoding="utf-8"))
        shown = {i["name"]: i for i in record["inputs"]}
        assert {"P", "tau", "Omega"} <= set(shown) and not {"F0", "F1", "a", "w"} & set(shown)
        assert shown["Omega"]["source"] == "Surge analysis HCW-HYD-012 rev A (invented)"
        v = _inputs(self.example)
        m, k, zeta = _si(v, "mass"), _si(v, "stiffness"), v["damping_ratio"]
        c = 2 * zeta * math.sqrt(k * m)
        P, tau, Omega = 1500.0, 0.3, 2 * math.pi * 9.0  # 9 Hz = 18 pi rad/s (definition of the hertz)

        def rhs(t, y):
            return [y[1], (P * math.exp(-t / tau) * math.sin(Omega * t) - c * y[1] - k * y[0]) / m]

        t_end = _si(v, "duration")
        times = np.linspace(0, t_end, 6001)
        ref = solve_ivp(rhs, (0, t_end), [0.0, 0.0], t_eval=times, rtol=1e-10, atol=1e-14).y[0]
        assert _results(record)["peak_displacement"] == pytest.approx(np.max(np.abs(ref)), rel=1e-3)


class TestSingleMassHarmonic:
    def test_undamped_exact_resonance_says_resonance(self, tmp_path):
        """Undamped and driven exactly at omega_n = sqrt(k/m) = sqrt(1e7 N/m / 1000 kg) = 100 rad/s: the
        steady amplitude F0 / |k - m omega^2| is unbounded (Rao, Mechanical Vibrations, 5th ed., sec. 3.3,
        from memory; checked here by sympy.limit), and the build says "resonance", not a division by zero."""
        w = sp.Symbol("w", positive=True)
        assert sp.limit(900 / sp.Abs(10**7 - 1000 * w**2), w, 100) == sp.oo
        text = (EXAMPLES / "harrow_creek_p101.toml").read_text(encoding="utf-8")
        for name, value in (
            ("mass", '"1000 kg"'),
            ("stiffness", '"10000 kN/m"'),
            ("forcing_frequency", '"100 rad/s"'),
            ("damping_ratio", "0"),
        ):
            text = _changed(text, name, value)
        path = tmp_path / "resonance.toml"
        path.write_text(text, encoding="utf-8")
        with pytest.raises(CellError) as caught:
            build_sheet("single_mass_harmonic", path, tmp_path / "out")
        assert caught.value.user_error and caught.value.ename == "ModelError"
        message = str(caught.value)
        assert (
            "undamped at exact resonance (r = 1, zeta = 0) the steady amplitude grows without bound"
            in message
        )
        assert "Add damping (zeta > 0) or move the speed off the natural frequency" in message
        assert "zero in a denominator" not in message and "report" not in message
        assert not (tmp_path / "out").exists()


class TestPeriodicLoad:
    example = "harrow_creek_sp601_stroke.toml"

    def _shape(self):
        v = _inputs(self.example)
        P, T = _si(v, "peak_force"), _si(v, "stroke_period")
        t1, t2, t3 = _si(v, "rise_time"), _si(v, "dwell_time"), _si(v, "release_time")
        return v, P, T, t1, t2, t3

    def _coefficients(self, N):
        """a_n, b_n of the trapezoid from the jumps of its slope: integrating the Euler formulas by parts
        twice gives c_n = -(1/T) sum_j ds_j exp(-i n w t_j) / (n w)^2 for a continuous piecewise-linear
        load (Kreyszig, Advanced Engineering Mathematics, 10th ed., sec. 11.1, from memory)."""
        _, P, T, t1, t2, t3 = self._shape()
        w = 2 * math.pi / T
        jumps = [(0.0, P / t1), (t1, -P / t1), (t1 + t2, -P / t3), (t1 + t2 + t3, P / t3)]
        out = []
        for n in range(1, N + 1):
            cn = -sum(ds * np.exp(-1j * n * w * tj) for tj, ds in jumps) / (T * (n * w) ** 2)
            out.append((2 * cn.real, -2 * cn.imag))
        return out

    def test_fourier_coefficients_closed_form(self, built):
        """The general-n coefficients on the sheet against the slope-jump closed form, n = 1..N."""
        v, P, T, t1, t2, t3 = self._shape()
        res = _results(built["periodic_load"][0])
        n = sp.Symbol("n", integer=True, positive=True)
        a_n = sp.lambdify(n, sp.sympify(res["a_n"], locals={"n": n}))
        b_n = sp.lambdify(n, sp.sympify(res["b_n"], locals={"n": n}))
        for number, (a, b) in enumerate(self._coefficients(v["harmonics"]), start=1):
            assert a_n(number) == pytest.approx(a, abs=1e-9 * P)
            assert b_n(number) == pytest.approx(b, abs=1e-9 * P)
        assert res["a_0"] == pytest.approx(P * (t1 / 2 + t2 + t3 / 2) / T, rel=1e-12)

    def test_captured_fraction_parseval(self, built):
        """Parseval: a_0^2 + sum (a_n^2 + b_n^2)/2 over the exact mean square P^2 (t1/3 + t2 + t3/3)/T."""
        v, P, T, t1, t2, t3 = self._shape()
        res = _results(built["periodic_load"][0])
        a0 = P * (t1 / 2 + t2 + t3 / 2) / T
        ms = P**2 * (t1 / 3 + t2 + t3 / 3) / T
        held = a0**2 + sum(a * a + b * b for a, b in self._coefficients(v["harmonics"])) / 2
        assert res["captured_fraction"] == pytest.approx(held / ms, rel=1e-9)
        assert res["alternating_captured_fraction"] == pytest.approx((held - a0**2) / (ms - a0**2), rel=1e-9)

    def test_separation_of_significant_harmonics(self, built):
        """The check looks at every significant harmonic, not only the first: significant means X_n at
        least significant_fraction of the largest X_n (the template's rule, common practice, no source),
        with X_n from the slope-jump coefficients; the value is the smallest |n w / w_n - 1|."""
        v, P, T, t1, t2, t3 = self._shape()
        record = built["periodic_load"][0]
        m, k, zeta = _si(v, "frame_mass"), _si(v, "frame_stiffness"), v["damping_ratio"]
        c, wn, w = 2 * zeta * math.sqrt(k * m), math.sqrt(k / m), 2 * math.pi / T
        X = {
            n: math.hypot(a, b) / abs(k - m * (n * w) ** 2 + 1j * c * n * w)
            for n, (a, b) in enumerate(self._coefficients(v["harmonics"]), start=1)
        }
        significant = [n for n, x in X.items() if x >= v["significant_fraction"] * max(X.values())]
        closest = min(significant, key=lambda n: abs(n * w / wn - 1))
        assert closest > 1  # the example's frame: a higher harmonic, not the first, sits near resonance
        check = _check(record, "separation")
        assert _results(record)["closest_significant_harmonic"] == closest
        # the sheet's separation step works from the two frequencies as shown, 4 significant figures (its
        # rounding rule), each within half a unit of the 4th figure (5e-4 relative): the ratio moves by at most
        # about 2 x 5e-4 of itself, which matters here where the separation itself is below 0.1 %
        ratio = closest * w / wn
        assert abs(check["value"] - abs(ratio - 1) * 100) <= 100 * ratio * 2 * 5e-4 * 1.0001
        assert check["verdict"] == ("met" if abs(closest * w / wn - 1) >= 0.2 else "not met")
        # every harmonic kept is in the separation table; the significant ones are judged, the rest shown waived
        (table,) = [t for t in record["tables"] if t["caption"].startswith("Separation of every mode")]
        assert [row[2] for row in table["rows"]] == [f"{n}x" for n in range(1, v["harmonics"] + 1)]
        assert [int(row[2][:-1]) for row in table["rows"] if not row[7].startswith("waived")] == sorted(significant)
        reach = _check(record, "highest harmonic kept")
        assert reach["value"] == pytest.approx(v["harmonics"] * w / wn, rel=1e-9)

    def test_dominant_harmonic_and_peak(self, built):
        """X_n = |F_n| / |k - m (n w)^2 + i c n w| for the dominant harmonic, and the steady peak
        against scipy.integrate.solve_ivp run through 20 strokes of the exact load."""
        from scipy.integrate import solve_ivp

        v, P, T, t1, t2, t3 = self._shape()
        res = _results(built["periodic_load"][0])
        m, k, zeta = _si(v, "frame_mass"), _si(v, "frame_stiffness"), v["damping_ratio"]
        c = 2 * zeta * math.sqrt(k * m)
        w = 2 * math.pi / T
        X = [
            math.hypot(a, b) / abs(k - m * (n * w) ** 2 + 1j * c * n * w)
            for n, (a, b) in enumerate(self._coefficients(v["harmonics"]), start=1)
        ]
        assert res["dominant_harmonic"] == 1 + int(np.argmax(X))
        assert res["dominant_amplitude"] == pytest.approx(max(X), rel=1e-9)

        def load(t):
            s = t % T
            if s < t1:
                return P * s / t1
            if s < t1 + t2:
                return P
            if s < t1 + t2 + t3:
                return P * (t1 + t2 + t3 - s) / t3
            return 0.0

        def rhs(t, y):
            return [y[1], (load(t) - c * y[1] - k * y[0]) / m]

        strokes = 20
        times = np.linspace((strokes - 2) * T, strokes * T, 8001)
        sol = solve_ivp(
            rhs, (0, strokes * T), [0.0, 0.0], t_eval=times, rtol=1e-9, atol=1e-12, max_step=T / 400
        )
        assert res["peak_displacement"] == pytest.approx(np.max(np.abs(sol.y[0])), rel=0.02)

    def test_every_result_shows_its_working(self, built):
        """Issue 16: each numbered result names how it was obtained; the mean square (a formula step)
        against scipy.integrate.quad of f^2 over one period, and the static deflections a_0/k and P/k."""
        from scipy.integrate import quad

        v, P, T, t1, t2, t3 = self._shape()
        record = built["periodic_load"][0]
        kinds = {"formula", "derivation", "input", "table", "procedure"}
        for item in record["results"]:
            assert item["working"]["kind"] in kinds and item["working"]["text"].strip(), item["name"]
        res = _results(record)
        pieces = [
            (0, t1, lambda s: P * s / t1),
            (t1, t1 + t2, lambda s: P),
            (t1 + t2, t1 + t2 + t3, lambda s: P * (t1 + t2 + t3 - s) / t3),
        ]
        ms = sum(quad(lambda s, g=g: g(s) ** 2, lo, hi)[0] for lo, hi, g in pieces) / T
        assert res["mean_square"] == pytest.approx(ms, rel=1e-9)
        k = _si(v, "frame_stiffness")
        assert res["static_deflection"] == pytest.approx(P * (t1 / 2 + t2 + t3 / 2) / T / k, rel=1e-3)
        assert res["peak_quasi_static"] == pytest.approx(P / k, rel=1e-3)
        by_name = {i["name"]: i for i in record["results"]}
        assert by_name["peak_displacement"]["working"]["kind"] == "procedure"
        assert "4001" in by_name["peak_displacement"]["working"]["text"]
        checks = [c for c in record["checks"] if c["name"].startswith("independent check")]
        assert len(checks) == 2 and all(
            c["verdict"] == "met" for c in checks
        )  # the Fourier sum and the exact solution

    def test_exact_periodic_peak_against_solve_ivp(self, built):
        """The exact periodic peak against scipy.integrate.solve_ivp through 30 strokes of the load itself
        (zeta omega_n T = 2.5 a stroke: the start-up has decayed), and the Fourier peak below it."""
        from scipy.integrate import solve_ivp

        v, P, T, t1, t2, t3 = self._shape()
        res = _results(built["periodic_load"][0])
        m, k, zeta = _si(v, "frame_mass"), _si(v, "frame_stiffness"), v["damping_ratio"]
        c = 2 * zeta * math.sqrt(k * m)
        edges = [0.0, t1, t1 + t2, t1 + t2 + t3, T]
        loads = [lambda s: P * s / t1, lambda s: P, lambda s: P * (t1 + t2 + t3 - s) / t3, lambda s: 0.0]
        state, peak = [0.0, 0.0], 0.0
        for stroke in range(30):
            for lo, hi, g in zip(edges[:-1], edges[1:], loads, strict=True):
                sol = solve_ivp(
                    lambda s, y, g=g: [y[1], (g(s) - c * y[1] - k * y[0]) / m],
                    (lo, hi),
                    state,
                    method="DOP853",
                    rtol=1e-11,
                    atol=1e-14,
                    dense_output=True,
                )
                if stroke == 29:
                    peak = max(peak, float(np.max(np.abs(sol.sol(np.linspace(lo, hi, 2001))[0]))))
                state = sol.y[:, -1]
        assert res["peak_displacement_exact"] == pytest.approx(peak, rel=1e-5)
        assert res["peak_displacement"] < res["peak_displacement_exact"]
        assert _check(built["periodic_load"][0], "frame displacement")["value"] == pytest.approx(
            peak * 1000, rel=1e-5
        )


def _b402_record() -> tuple[np.ndarray, np.ndarray]:
    """The B-402 record read with numpy alone: times in s, acceleration in m/s^2 (the header says g_n)."""
    path = EXAMPLES / "harrow_creek_b402_trip.csv"
    lines = [line for line in path.read_text(encoding="utf-8").splitlines() if not line.startswith("#")]
    assert lines[0] == "time (s),acceleration (g_n)"
    data = np.array([[float(x) for x in line.split(",")] for line in lines[1:]])
    return data[:, 0], data[:, 1] * G_N


def _integrated_base_response(times, accel, wn, zeta):
    """z and z' at the samples of z'' + 2 zeta wn z' + wn^2 z = -a_g, from rest, a_g straight between samples:
    scipy.integrate.solve_ivp (DOP853) one interval at a time, so no step crosses a kink of the load."""
    from scipy.integrate import solve_ivp

    state, out = np.zeros(2), np.zeros((2, times.size))
    for k in range(times.size - 1):
        t0, t1, a0 = times[k], times[k + 1], accel[k]
        slope = (accel[k + 1] - a0) / (t1 - t0)

        def rhs(tt, y, t0=t0, a0=a0, slope=slope):
            return [y[1], -(a0 + slope * (tt - t0)) - 2 * zeta * wn * y[1] - wn**2 * y[0]]

        sol = solve_ivp(rhs, (t0, t1), state, method="DOP853", rtol=1e-10, atol=1e-15)
        state = sol.y[:, -1]
        out[:, k + 1] = state
    return out


class TestMeasuredLoad:
    example = "harrow_creek_b402_trip.toml"

    def _reference(self, stiffness=None):
        v = _inputs(self.example)
        m = _si(v, "equipment_mass")
        k = _si(v, "mount_stiffness") if stiffness is None else stiffness
        wn, zeta = math.sqrt(k / m), v["damping_ratio"]
        times, accel = _b402_record()
        z, dz = _integrated_base_response(times, accel, wn, zeta)
        self.velocity = dz
        return m, wn, zeta, z, -(2 * zeta * wn * dz + wn**2 * z)

    def test_peaks_against_solve_ivp(self, built):
        """Largest deflection and absolute acceleration against solve_ivp of the record; the sheet's peaks are
        refined between samples (and include the free vibration after the record), so they are at least the
        sampled ones and only a little above them at 126 samples a period."""
        res = _results(built["measured_load"][0])
        m, wn, zeta, z, accel = self._reference()
        assert res["natural_frequency"] == pytest.approx(wn, rel=1e-3)
        z_ref, a_ref = np.max(np.abs(z)), np.max(np.abs(accel))
        assert z_ref * (1 - 1e-9) <= res["peak_deflection"] <= z_ref * 1.002
        assert a_ref * (1 - 1e-9) <= res["peak_acceleration"] <= a_ref * 1.002
        # through spring and damper, k z + c z' with c = 2 zeta sqrt(k m), from the solve_ivp motion
        k = wn**2 * m
        force = k * z + 2 * zeta * math.sqrt(k * m) * self.velocity
        assert res["peak_mount_force"] == pytest.approx(np.max(np.abs(force)), rel=2e-3)
        assert res["peak_spring_force"] == pytest.approx(k * z_ref, rel=2e-3)  # the spring alone, k z
        assert res["z_integrated"] == pytest.approx(z_ref, rel=1e-8)

    def test_moved_case_near_the_floor_mode(self, built):
        """Stiffer mounts put the skid near the floor's ringing: the acceleration against solve_ivp again."""
        moved = _results(built["measured_load"][1])
        *_, accel = self._reference(stiffness=7e6)
        a_ref = np.max(np.abs(accel))
        assert a_ref * (1 - 1e-9) <= moved["peak_acceleration"] <= a_ref * 1.002
        assert a_ref > 0.5 * G_N  # the limit of the example, from the solve_ivp reference alone

    def test_force_record_refused(self, tmp_path):
        """A record of a force is refused at record_file, saying what the template takes."""
        (tmp_path / "force.csv").write_text(
            "time (s),force (kN)\n0,0\n0.001,1\n0.002,0\n0.003,0\n", encoding="utf-8"
        )
        text = _changed((EXAMPLES / self.example).read_text(encoding="utf-8"), "record_file", '"force.csv"')
        bad = tmp_path / "bad.toml"
        bad.write_text(text, encoding="utf-8")
        with pytest.raises(CellError) as caught:
            build_sheet("measured_load", bad, tmp_path / "out")
        assert "force.csv holds a force, and this template takes a base acceleration" in str(caught.value)
        assert "record_file" in str(caught.value)


class TestShockPulse:
    example = "harrow_creek_ps516_slam.toml"

    def _reference(self, shape="half_sine", amplitude=None, zeta=None, td=None):
        """x(t) and the support force k x + c x' by scipy.integrate.solve_ivp (DOP853), during and after the pulse
        integrated separately from the state at its end; the pulse written here from its textbook definition."""
        from scipy.integrate import solve_ivp

        v = _inputs(self.example)
        m, k = _si(v, "mass"), _si(v, "stiffness")
        zeta = v["damping_ratio"] if zeta is None else zeta
        c = 2 * zeta * math.sqrt(k * m)
        F0 = _si(v, "pulse_amplitude") if amplitude is None else amplitude
        td = _si(v, "pulse_duration") if td is None else td
        shapes = {
            "half_sine": lambda tt: F0 * math.sin(math.pi * tt / td),
            "rectangular": lambda tt: F0,
            "triangle": lambda tt: F0 * (1 - abs(2 * tt / td - 1)),  # continuous: one piece for the solver
        }
        t_end = _si(v, "duration")
        out = []
        state = [0.0, 0.0]
        for (a, b), load in (((0.0, td), shapes[shape]), ((td, t_end), lambda tt: 0.0)):
            times = np.linspace(a, b, 20001)

            def rhs(tt, y, load=load):
                return [y[1], (load(tt) - c * y[1] - k * y[0]) / m]

            sol = solve_ivp(rhs, (a, b), state, t_eval=times, method="DOP853", rtol=1e-11, atol=1e-15)
            state = sol.y[:, -1]
            out.append((sol.y[0], k * sol.y[0] + c * sol.y[1]))
        return k, F0, td, out

    def test_peaks_against_solve_ivp(self, built):
        """Primary, residual and maximax displacement and the support force against solve_ivp of the same pulse."""
        res = _results(built["shock_pulse"][0])
        k, F0, td, ((x_in, f_in), (x_out, f_out)) = self._reference()
        assert res["primary_displacement"] == pytest.approx(np.max(np.abs(x_in)), rel=1e-6)
        assert res["residual_displacement"] == pytest.approx(np.max(np.abs(x_out)), rel=1e-6)
        peak = max(np.max(np.abs(x_in)), np.max(np.abs(x_out)))
        assert res["peak_displacement"] == pytest.approx(peak, rel=1e-3)  # printed to 4 figures
        assert res["peak_support_force"] == pytest.approx(
            max(np.max(np.abs(f_in)), np.max(np.abs(f_out))), rel=1e-6
        )
        assert res["static_deflection"] == pytest.approx(F0 / k, rel=1e-9)
        assert res["shock_response_factor"] == pytest.approx(peak / (F0 / k), rel=2e-3)
        assert res["spectrum_point"] == pytest.approx(peak, rel=1e-5)  # the pulse's spectrum at this omega_n

    def test_undamped_half_sine_closed_form(self, built):
        """Undamped, a half-sine shorter than half the natural period leaves its largest motion after the pulse:
        x_r / x_st = (T_n/t_d) |cos(pi t_d/T_n)| / |(T_n/(2 t_d))^2 - 1|
        (A. K. Chopra, Dynamics of Structures, 4th ed., sec. 4.8, half-cycle sine pulse, from memory)."""
        res = _results(built["shock_pulse"][1])
        v = _inputs(self.example)
        m, k, td = _si(v, "mass"), _si(v, "stiffness"), _si(v, "pulse_duration")
        Tn = 2 * math.pi / math.sqrt(k / m)
        assert td / Tn < 0.5
        factor = (Tn / td) * abs(math.cos(math.pi * td / Tn)) / abs((Tn / (2 * td)) ** 2 - 1)
        x_st = 15e3 / k
        assert res["residual_displacement"] == pytest.approx(factor * x_st, rel=1e-6)
        assert res["primary_displacement"] < res["residual_displacement"]
        assert res["shock_response_factor"] == pytest.approx(factor, rel=1e-3)

    def test_long_rectangular_pulse_twice_static(self, tmp_path):
        """A rectangular pulse longer than half the natural period on an undamped support: the largest motion
        during it is twice the static deflection, after it 2 |sin(pi t_d/T_n)| x_st
        (Chopra, Dynamics of Structures, 4th ed., sec. 4.7, rectangular pulse, from memory)."""
        text = (EXAMPLES / self.example).read_text(encoding="utf-8")
        for name, value in {
            "pulse_shape": '"rectangular"',
            "pulse_duration": '"200 ms"',
            "damping_ratio": "0",
        }.items():
            text = _changed(text, name, value)
        inputs = tmp_path / "long.toml"
        inputs.write_text(text, encoding="utf-8")
        res = _results(build_sheet("shock_pulse", inputs, tmp_path / "out").record)
        v = _inputs(self.example)
        m, k, F0 = _si(v, "mass"), _si(v, "stiffness"), _si(v, "pulse_amplitude")
        Tn = 2 * math.pi / math.sqrt(k / m)
        assert res["primary_displacement"] == pytest.approx(2 * F0 / k, rel=1e-6)
        assert res["residual_displacement"] == pytest.approx(
            2 * abs(math.sin(math.pi * 0.2 / Tn)) * F0 / k, rel=1e-6
        )
        *_, ((x_in, _f), _after) = self._reference("rectangular", zeta=0.0, td=0.2)
        assert res["primary_displacement"] == pytest.approx(np.max(np.abs(x_in)), rel=1e-6)

    def test_triangle_against_solve_ivp(self, tmp_path):
        """A symmetric triangle switches twice (at t_d/2 and t_d): its peaks against solve_ivp."""
        text = _changed((EXAMPLES / self.example).read_text(encoding="utf-8"), "pulse_shape", '"triangle"')
        inputs = tmp_path / "triangle.toml"
        inputs.write_text(text, encoding="utf-8")
        res = _results(build_sheet("shock_pulse", inputs, tmp_path / "out").record)
        *_, ((x_in, f_in), (x_out, f_out)) = self._reference("triangle")
        assert res["primary_displacement"] == pytest.approx(np.max(np.abs(x_in)), rel=1e-6)
        assert res["residual_displacement"] == pytest.approx(np.max(np.abs(x_out)), rel=1e-6)
        assert res["peak_support_force"] == pytest.approx(
            max(np.max(np.abs(f_in)), np.max(np.abs(f_out))), rel=1e-6
        )

    def test_unknown_shape_refused(self, tmp_path):
        """A pulse shape the template does not know is refused at pulse_shape, with the shapes it knows."""
        text = _changed((EXAMPLES / self.example).read_text(encoding="utf-8"), "pulse_shape", '"square"')
        bad = tmp_path / "bad.toml"
        bad.write_text(text, encoding="utf-8")
        with pytest.raises(CellError) as caught:
            build_sheet("shock_pulse", bad, tmp_path / "out")
        message = str(caught.value)
        assert '"square" is not a pulse this template knows' in message and "pulse_shape" in message
        assert "half_sine, versed_sine, triangle" in message

class TestMachineOnMounts:
    """The skid on six mounts against matrices built here from the example's inputs."""

    example = "harrow_creek_b207_mounts.toml"

    def _matrices(self):
        """M and K built here: each spring along d at arm r stretches by d.x + theta.(r x d) (triple product)."""
        from calckit.core.expressions import parse_parameters

        v = _inputs(self.example)
        def point(text):
            pairs = parse_parameters(text.split(":")[-1], where="p").values()
            return [float(to_si(q, "p").magnitude) for q in pairs]

        m = _si(v, "machine_mass")
        cg = np.array(point(v["centre_of_gravity"]))
        J = {
            k: float(to_si(q, k).magnitude)
            for k, q in parse_parameters(v["inertia_tensor"], where="J").items()
        }
        M = np.zeros((6, 6))
        M[:3, :3] = m * np.eye(3)
        M[3:, 3:] = [
            [J["Jxx"], J["Jxy"], J["Jxz"]],
            [J["Jxy"], J["Jyy"], J["Jyz"]],
            [J["Jxz"], J["Jyz"], J["Jzz"]],
        ]
        ka, ks = _si(v, "mount_axial_stiffness"), _si(v, "mount_shear_stiffness")
        K = np.zeros((6, 6))
        mounts = [np.array(point(v[f"mount_{i}"])) for i in range(1, 7)]
        for p in mounts:
            r = p - cg
            for d, k in (
                (np.array([1.0, 0, 0]), ks),
                (np.array([0, 1.0, 0]), ks),
                (np.array([0, 0, 1.0]), ka),
            ):
                g = np.concatenate([d, np.cross(r, d)])
                K += k * np.outer(g, g)
        return v, m, cg, M, K, mounts

    def test_six_frequencies_against_scipy_eigh(self, built):
        """omega_1..6 on the sheet against scipy.linalg.eigh(K, M) of matrices built here."""
        import scipy.linalg

        *_, M, K, _ = self._matrices()
        res = _results(built["machine_on_mounts"][0])
        w = np.sqrt(scipy.linalg.eigh(K, M, eigvals_only=True))
        assert [res[f"omega_{j}"] for j in range(1, 7)] == pytest.approx(list(w), rel=1e-9)

    def test_static_loads_balance_the_weight(self, built):
        """The six static loads hold m g_n and balance its moment about G (statics)."""
        v, m, cg, _, _, mounts = self._matrices()
        res = _results(built["machine_on_mounts"][0])
        P = np.array([res[f"P_M{i}"] for i in range(1, 7)])
        arms = np.array(mounts) - cg
        assert P.sum() == pytest.approx(m * G_N, rel=1e-9)
        assert abs(P @ arms[:, 0]) < 1e-6 * m * G_N and abs(P @ arms[:, 1]) < 1e-6 * m * G_N
        assert res["delta_M6"] == pytest.approx(res["P_M6"] / _si(v, "mount_axial_stiffness"), rel=1e-9)

    def test_unbalance_moment_against_numpy_cross(self, built):
        """The moment steps of the unbalance force about G against numpy.cross of the arm and the force."""
        res = _results(built["machine_on_mounts"][0])
        arm = np.array([res["r_Ux"], res["r_Uy"], res["r_Uz"]])
        F0 = res["F_0"]
        for part, F in (("c", [0, F0, 0]), ("s", [0, 0, F0])):
            got = [res[f"M_{a}_{part}"] for a in "xyz"]
            assert got == pytest.approx(list(np.cross(arm, F)), rel=1e-3, abs=1e-3 * F0)

    def test_support_against_roark(self, built):
        """The floor beam's stiffness under a mount against Roark's simply supported beam with a point load,
        k = 3 E I L / (a^2 b^2) (Young and Budynas, Roark's Formulas for Stress and Strain, 7th ed., Table 8.1,
        case 1e, from memory), and the support check's ratio against the mount's axial stiffness."""
        v = _inputs(self.example)
        E = float(to_si(quantity(v["support_modulus"], "E"), "E").magnitude)
        I = float(to_si(quantity(v["support_second_moment"], "I"), "I").magnitude)  # noqa: E741
        L, a = _si(v, "support_span"), _si(v, "support_load_position")
        k = 3 * E * I * L / (a**2 * (L - a) ** 2)
        res = _results(built["machine_on_mounts"][0])
        assert res["k_support"] == pytest.approx(k, rel=1e-3)
        check = _check(built["machine_on_mounts"][0], "support stiffness")
        assert check["value"] == pytest.approx(k / _si(v, "mount_axial_stiffness"), rel=2e-3)
        assert check["verdict"] == "met" and check["limit"] == v["support_stiffness_ratio"]
