"""Tolerance bands on inputs: read from inputs files, put on sheets, and the checks over them.

Every number the study gives is checked against something outside calckit: the textbook
closed forms of the magnification and the steady amplitude of one mass under a harmonic
force (S. S. Rao, Mechanical Vibrations, 5th ed., sec. 3.4, from memory) evaluated with
numpy at the corners, ``scipy.optimize.minimize_scalar`` for an extremum inside the box,
central finite differences with numpy for the sensitivities, and the exact probability
of a threshold on a uniform (length fraction) or normal (``scipy.stats.norm.cdf``) input
for the sampled study. The scenario: backwash pump P-131 of the Harrow Creek works
(invented).
"""

from __future__ import annotations

import itertools
import json
import math
from html import unescape

import numpy as np
import pytest
import sympy as sp

import calckit as ck
from calckit.core.tolerances import tolerance_band
from calckit.core.units import Q_
from calckit.sheet import Sheet, read_record
from calckit.sheet.record import seal_of
from calckit.workflow.inputs import read_inputs
from calckit.workflow.templates import inputs_cell_source

k_, m_, w_, wn_, r_, z_, F_, c_ = sp.symbols("k m omega omega_n r zeta F_0 c")


def book_magnification(r, zeta):
    """X k / F0 = 1 / sqrt((1 - r^2)^2 + (2 zeta r)^2) (Rao, 5th ed., sec. 3.4, from memory)."""
    return 1 / np.sqrt((1 - r**2) ** 2 + (2 * zeta * r) ** 2)


def book_amplitude(F0, m, c, k, w):
    """X = F0 / sqrt((k - m w^2)^2 + (c w)^2) (Rao, 5th ed., sec. 3.4, from memory)."""
    return F0 / np.sqrt((k - m * w**2) ** 2 + (c * w) ** 2)


RPM = 2 * math.pi / 60  # rad/s in one rpm


def magnification_sheet(tolerances, limit=0.04):
    """P-131 on springs: omega_n, r and M as steps, M checked against *limit* (above resonance: M falls with r)."""
    sheet = Sheet("Backwash pump P-131 on springs", show=False, tolerances=tolerances)
    m = sheet.given("mass", "1200 kg", "m", "Pump and base", "mass")
    k = sheet.given("stiffness", "400 kN/m", "k", "Springs together", "stiffness")
    w = sheet.given("speed", "980 rpm", r"\omega", "Running speed", "frequency")
    zeta = sheet.given(
        "damping_ratio", 0.05, r"\zeta", "Damping ratio", "dimensionless", sign=ck.non_negative
    )
    sheet.calc("omega_n", sp.sqrt(k_ / m_), {"k": k, "m": m}, unit="rad/s")
    sheet.calc("r", w_ / wn_, {"omega": w, "omega_n": sheet.carried("omega_n")}, unit="")
    M = sheet.calc(
        "M",
        1 / sp.sqrt((1 - r_**2) ** 2 + (2 * z_ * r_) ** 2),
        {"r": sheet.carried("r"), "zeta": zeta},
        unit="",
    )
    sheet.check("magnification", M, Q_(limit, ""), basis="common practice, no source")
    return sheet


BANDS = {
    "mass": {"tolerance": "10 %"},
    "stiffness": {"tolerance": "15 %"},
    "speed": {"min": "900 rpm", "max": "1000 rpm"},
}
CORNERS = list(itertools.product((1080.0, 1320.0), (340e3, 460e3), (900 * RPM, 1000 * RPM)))


@pytest.fixture(scope="module")
def magnification():
    sheet = magnification_sheet(BANDS)
    sheet.sample_study(n=20_000, distribution="uniform", seed=3)
    return sheet, sheet.tolerance_study().checks[0]


class TestWorstCase:
    """The worst case over the box: corners of a monotonic result, an extremum inside the box."""

    def test_monotonic_worst_is_the_worst_corner(self, magnification):
        """Above resonance M falls with r: the worst is a corner; numpy on the book's M at all 8 corners agrees."""
        _sheet, check = magnification
        corners = [book_magnification(w / math.sqrt(k / m), 0.05) for m, k, w in CORNERS]
        worst = int(np.argmax(corners))
        assert check.evaluated and not check.inside and check.corners == 8
        assert check.worst_value == pytest.approx(corners[worst], rel=1e-9)
        m, k, w = CORNERS[worst]  # heavy, stiff and slow: the lowest frequency ratio
        governing = dict(check.governing)
        assert (governing["mass"], governing["stiffness"], governing["speed"]) == pytest.approx(
            (m, k / 1000, w / RPM), rel=1e-9
        )

    def test_verdict_flips_between_nominal_and_worst_case(self, magnification):
        """M = 0.0327 meets 0.04 at the nominal inputs; at the worst corner (0.0408, numpy above) it does not."""
        sheet, check = magnification
        r = 980 * RPM / math.sqrt(400e3 / 1200)
        assert (
            book_magnification(r, 0.05)
            < 0.04
            < max(book_magnification(w / math.sqrt(k / m), 0.05) for m, k, w in CORNERS)
        )
        assert (check.nominal_met, check.worst_met) == (True, False)
        assert sheet.checks[0].met
        html = unescape(sheet.to_html())
        assert "Tolerances: worst case and sensitivities" in html
        assert "Over the inputs' tolerance bands: 0 of 1 evaluated met at the worst case, 1 NOT MET" in html

    def test_interior_extremum_against_minimize_scalar(self):
        """A stiffness band holding resonance: the largest amplitude is inside the box (scipy.optimize.minimize_scalar)."""
        from scipy.optimize import minimize_scalar

        sheet = Sheet(
            "Backwash pump P-132 on springs", show=False, tolerances={"stiffness": {"tolerance": "15 %"}}
        )
        m = sheet.given("mass", "500 kg", "m", "Pump and base", "mass")
        k = sheet.given("stiffness", "2.2 MN/m", "k", "Springs together", "stiffness")
        w = sheet.given("speed", "600 rpm", r"\omega", "Running speed", "frequency")
        zeta = sheet.given("damping_ratio", 0.02, r"\zeta", "Damping ratio", "dimensionless")
        F0 = sheet.given("force", "2 kN", "F_0", "Force amplitude", "force")
        sheet.calc("c", 2 * z_ * sp.sqrt(k_ * m_), {"zeta": zeta, "k": k, "m": m}, unit="N*s/m")
        X = sheet.calc(
            "X", F_ / sp.sqrt((k_ - m_ * w_**2) ** 2 + (c_ * w_) ** 2),
            {"F_0": F0, "k": k, "m": m, "c": sheet.carried("c"), "omega": w}, unit="mm",
        )  # fmt: skip
        sheet.check("amplitude", X, "10 mm")
        check = sheet.tolerance_study().checks[0]

        def amplitude(k_si):  # c = 2 zeta sqrt(k m) moves with k too
            return book_amplitude(2000.0, 500.0, 2 * 0.02 * math.sqrt(k_si * 500.0), k_si, 600 * RPM)

        best = minimize_scalar(lambda x: -amplitude(x), bounds=(1.87e6, 2.53e6), method="bounded",
                               options={"xatol": 1e-3})  # fmt: skip
        assert 1.87e6 < 500 * (600 * RPM) ** 2 < 2.53e6  # resonance m omega^2 lies in the band
        assert max(amplitude(1.87e6), amplitude(2.53e6)) < 0.7 * -best.fun  # the corners alone would miss it
        assert check.inside
        assert check.worst_value == pytest.approx(-best.fun * 1000, rel=1e-7)  # in mm
        assert dict(check.governing)["stiffness"] == pytest.approx(
            best.x / 1e6, rel=1e-5
        )  # in MN/m, as given
        assert (check.nominal_met, check.worst_met) == (True, False)

    def test_limit_with_a_band(self):
        """A limit that is itself a banded input: the worst case takes the value high and the limit low
        (hand arithmetic: 110 N/m against 105 * 0.95 = 99.75 N/m, margin (99.75 - 110) / 99.75)."""
        sheet = Sheet("x", show=False, tolerances={"k": {"tolerance": "10 %"}, "k_max": {"tolerance": "5 %"}})
        k = sheet.given("k", "100 N/m", "k", "Mount stiffness", "stiffness")
        k_max = sheet.given("k_max", "105 N/m", "k_{max}", "Largest stiffness allowed", "stiffness")
        sheet.check("stiffness", k, k_max)
        check = sheet.tolerance_study().checks[0]
        assert (check.worst_value, check.worst_limit) == pytest.approx((110.0, 99.75))
        assert check.worst_margin == pytest.approx((99.75 - 110) / 99.75 * 100)
        assert (check.nominal_met, check.worst_met) == (True, False)


class TestSensitivities:
    def test_elasticities_against_finite_differences(self, magnification):
        """(x/M) dM/dx against central differences of the book's M with numpy; the ends of each band too."""
        _sheet, check = magnification
        nominal = {"mass": 1200.0, "stiffness": 400e3, "speed": 980 * RPM}
        ends = {"mass": (1080.0, 1320.0), "stiffness": (340e3, 460e3), "speed": (900 * RPM, 1000 * RPM)}

        def M(values):
            return book_magnification(values["speed"] / math.sqrt(values["stiffness"] / values["mass"]), 0.05)

        for s in check.sensitivities:
            h = 1e-6
            up, down = dict(nominal), dict(nominal)
            up[s.input] *= 1 + h
            down[s.input] *= 1 - h
            assert s.elasticity == pytest.approx((M(up) - M(down)) / (2 * h * M(nominal)), rel=1e-6)
            low, high = dict(nominal), dict(nominal)
            low[s.input], high[s.input] = ends[s.input]
            assert (s.at_low, s.at_high) == pytest.approx((M(low), M(high)), rel=1e-9)
        assert check.decider == "stiffness"  # +-15 % on k moves r by about +-7.5 %, the most

    def test_tornado_chart_on_the_sheet(self, magnification):
        """The section carries the sensitivity table and the tornado chart (an inline SVG figure)."""
        sheet, _check = magnification
        html = sheet.to_html()
        section = html[html.index("Tolerances: worst case and sensitivities") :]
        assert "Elasticity, % per %" in section and "Tornado chart" in section and "<svg" in section


class TestSampledStudy:
    """The fraction of samples that pass against the exact probability of a threshold on one input."""

    @staticmethod
    def frequency_sheet(seed=7, distribution="uniform"):
        sheet = Sheet("Backwash pump P-131", show=False, tolerances={"stiffness": {"tolerance": "15 %"}})
        m = sheet.given("mass", "1200 kg", "m", "Pump and base", "mass")
        k = sheet.given("stiffness", "400 kN/m", "k", "Springs together", "stiffness")
        wn = sheet.calc("omega_n", sp.sqrt(k_ / m_), {"k": k, "m": m}, unit="rad/s")
        sheet.check("natural frequency", wn, "19 rad/s")
        sheet.sample_study(n=100_000, distribution=distribution, seed=seed)
        return sheet

    def test_uniform_pass_fraction_is_the_length_fraction(self):
        """omega_n <= 19 rad/s iff k <= m 19^2 = 433.2 kN/m: P = (433.2 - 340) / (460 - 340), uniform k."""
        exact = (1200 * 19**2 - 340e3) / (460e3 - 340e3)
        fraction = self.frequency_sheet().tolerance_study().checks[0].pass_fraction
        assert abs(fraction - exact) < 4 * math.sqrt(exact * (1 - exact) / 100_000)
        assert (
            self.frequency_sheet().tolerance_study().checks[0].pass_fraction == fraction
        )  # the seed redraws it

    def test_normal_pass_fraction_against_scipy(self):
        """Normal k, the half-band (60 kN/m) as 3 sigma: P = Phi((433.2 - 400) / 20) (scipy.stats.norm.cdf)."""
        from scipy.stats import norm

        exact = norm.cdf((1200 * 19**2 - 400e3) / 20e3)
        sheet = self.frequency_sheet(distribution="normal")
        fraction = sheet.tolerance_study().checks[0].pass_fraction
        assert abs(fraction - exact) < 4 * math.sqrt(exact * (1 - exact) / 100_000)
        assert "normal about its value with the half-band as 3 sigma" in unescape(sheet.to_html())

    def test_unknown_distribution_refused(self):
        with pytest.raises(ck.InputsError) as info:
            Sheet("x", show=False).sample_study(distribution="triangular")
        assert str(info.value) == (
            "sample_study: the distribution 'triangular' is not one the kit samples from. Give "
            'distribution="uniform" (over each band) or "normal" (the band as k sigma, k=3.0).'
        )


class TestNotEvaluated:
    def test_a_procedure_result_says_so(self):
        """A check on a procedure's result is not pretended over the bands: the sheet says why, in words."""
        sheet = Sheet("Backwash pump P-131", show=False, tolerances={"stiffness": {"tolerance": "15 %"}})
        sheet.given("stiffness", "400 kN/m", "k", "Springs together", "stiffness")
        peak = sheet.result("peak", Q_(0.2, "mm"), working=("procedure", "solve_ivp, rtol 1e-10"))
        sheet.check("largest motion", peak, "0.5 mm")
        sheet.check("untraced", float(peak.magnitude), 0.5, unit="mm")
        checks = sheet.tolerance_study().checks
        assert [c.reason for c in checks] == [
            "peak is from a numerical procedure",
            "its value is not traced to a result on the sheet (sheet.check(..., result=name) names it)",
        ]
        assert "largest motion: not evaluated over the tolerances: peak is from a numerical procedure." in (
            unescape(sheet.to_html())
        )

    def test_no_band_no_section(self):
        sheet = magnification_sheet({})
        assert sheet.tolerance_study() is None and "Tolerances:" not in sheet.to_html()
        assert "tolerances" not in sheet.record() and "tolerance" not in sheet.record()["inputs"][0]


class TestBands:
    """Bands read against their value; the ones that do not fit refused with what, where and what to do."""

    def test_forms(self):
        """Relative, absolute, and min/max bands: their ends in the value's unit (hand arithmetic)."""
        rel = tolerance_band("k", "720 kN/m", {"tolerance": "15 %"}, "k")
        ab = tolerance_band("k", "720 kN/m", {"tolerance": "50 kN/m"}, "k")
        ends = tolerance_band("n", "1480 rpm", {"min": "1300 rpm", "max": "25 Hz"}, "n")
        assert (rel.low.magnitude, rel.high.magnitude, rel.text) == (612.0, 828.0, "± 15 %")
        assert (ab.low.magnitude, ab.high.magnitude, ab.text) == (670.0, 770.0, "± 50 kN/m")
        assert (ends.low.magnitude, ends.high.magnitude) == pytest.approx(
            (1300.0, 1500.0)
        )  # 25 Hz = 1500 rpm

    @pytest.mark.parametrize(
        ("value", "band", "message"),
        [
            ("F0*cos(w*t)", {"tolerance": "5 %"},
             'x: the input forcing is the text "F0*cos(w*t)", not a number with a unit, so it cannot have a '
             "tolerance. Give a tolerance only to a number with its unit, or leave it out: "),
            ("720 kN/m", {"tolerance": "5 kg"},
             'x: the band\'s tolerance "5 kg" is not of the kind of the value 720 kN/m: the dimensions differ. '
             "Give the tolerance in a unit of the value's kind, or a tolerance in percent: "),
            ("1850 kg", {"min": "2000 kg", "max": "1700 kg"},
             "x: the band's min (2000 kg) is above its max (1700 kg). Write min below max, for example "),
            ("1850 kg", {"min": "1900 kg", "max": "2000 kg"},
             "x: the value 1850 kg lies outside its band 1900 kg to 2000 kg. Give a band that contains the value."),
            ("1850 kg", {"tolerance": "-5 %"},
             'x: the tolerance "-5 %" is not above zero. Give a tolerance above zero, or leave it out: '),
            ("1850 kg", {"min": "1700 kg"},
             "x: the band has a min but no max. Give both ends, or a tolerance either side: "),
        ],
        ids=["text input", "other dimension", "min above max", "value outside", "negative", "one end"],
    )  # fmt: skip
    def test_refused(self, value, band, message):
        name = "forcing" if "cos" in value else "mass"
        with pytest.raises(ck.InputsError) as info:
            tolerance_band(name, value, band, "x")
        assert str(info.value).startswith(message)

    def test_band_reaching_below_zero_refused_by_the_sign_rule(self):
        """A mass of 1850 kg +-120 % would reach -370 kg: refused where the input goes on the sheet."""
        sheet = Sheet("x", show=False, tolerances={"mass": {"tolerance": "120 %"}})
        with pytest.raises(ck.InputsError) as info:
            sheet.given("mass", "1850 kg", "m", "Pump and base", "mass")
        assert str(info.value) == (
            "input mass: the band ± 120 % of 1850 kg reaches -370 kg, which the input may not take (it must be "
            "positive). Give a tolerance narrower than the value, or min and max within the values the input may take."
        )
        ok = Sheet("x", show=False, tolerances={"zeta": {"min": 0, "max": 0.02}})
        ok.given("zeta", 0.01, r"\zeta", "Damping ratio", "dimensionless", sign=ck.non_negative)  # 0 allowed
        assert ok.inputs["zeta"].tolerance.low.magnitude == 0

    def test_inputs_file(self, tmp_path):
        """An inputs file gives bands with or without a source; a bad band is refused at its line."""
        path = tmp_path / "p131.toml"
        path.write_text(
            'subject = "P-131"\n[pump]\n'
            'mass = { value = "1200 kg", tolerance = "10 %", source = "GA drawing P-131-GA-001 (invented)" }\n'
            'stiffness = { value = "400 kN/m", min = "350 kN/m", max = "450 kN/m" }\n'
            'speed = "980 rpm"\n',
            encoding="utf-8",
        )
        read = read_inputs(path)
        assert dict(read.values) == {
            "subject": "P-131",
            "mass": "1200 kg",
            "stiffness": "400 kN/m",
            "speed": "980 rpm",
        }
        assert dict(read.sources) == {"mass": "GA drawing P-131-GA-001 (invented)"}
        assert {k: dict(v) for k, v in read.tolerances.items()} == {
            "mass": {"tolerance": "10 %"},
            "stiffness": {"min": "350 kN/m", "max": "450 kN/m"},
        }
        cell = inputs_cell_source(dict(read.values), "p131.toml", "ab", None, read.tolerances)
        assert "input_tolerances = {\n    'mass': {'tolerance': '10 %'},\n" in cell
        path.write_text(
            'subject = "P-131"\nforcing = { value = "F0*cos(w*t)", tolerance = "5 %" }\n', "utf-8"
        )
        with pytest.raises(ck.InputsError) as info:
            read_inputs(path)
        assert str(info.value).startswith(
            f'{path}, line 2, forcing: the input forcing is the text "F0*cos(w*t)", not a number with a unit'
        )


class TestBandsTable:
    """Bands in a [tolerances] table of their own, leaving the values' lines as they are."""

    def test_read(self, tmp_path):
        path = tmp_path / "p131.toml"
        path.write_text(
            '[pump]\nmass = "1200 kg"\nspeed = "980 rpm"\nzeta = 0.05\n\n'
            '[tolerances]\nmass = "10 %"\nspeed = { min = "900 rpm", max = "1000 rpm" }\nzeta = 0.01\n',
            encoding="utf-8",
        )
        read = read_inputs(path)
        assert "tolerances" not in read.groups.values() and set(read.values) == {"mass", "speed", "zeta"}
        assert {k: dict(v) for k, v in read.tolerances.items()} == {
            "mass": {"tolerance": "10 %"},
            "speed": {"min": "900 rpm", "max": "1000 rpm"},
            "zeta": {"tolerance": "0.01"},
        }

    @pytest.mark.parametrize(
        ("lines", "message"),
        [
            ('mass = "1200 kg"\n[tolerances]\nmas = "10 %"\n',
             'line 3, tolerances.mas: the band "mas" is for no input of this file. Name an input the file gives a '
             "value for, or remove the band."),
            ('mass = { value = "1200 kg", tolerance = "5 %" }\n[tolerances]\nmass = "10 %"\n',
             'line 3, tolerances.mass: the input "mass" has a band beside its value too. Give its band once: in the '
             "[tolerances] table or beside the value."),
        ],
        ids=["no such input", "twice"],
    )  # fmt: skip
    def test_refused(self, tmp_path, lines, message):
        """Refused when read, or (a band for no input) once the file's inputs are checked, before a kernel."""
        from calckit.workflow.tolerance_table import check_band_names

        path = tmp_path / "p131.toml"
        path.write_text(lines, encoding="utf-8")
        with pytest.raises(ck.InputsError) as info:
            check_band_names(read_inputs(path))
        assert str(info.value) == f"{path}, {message}"


class TestRecord:
    def test_record_version_4_round_trip(self, magnification):
        """The bands and the study are in the record (version 4), read back as written."""
        sheet, _check = magnification
        record = read_record(sheet.to_json())
        assert record.record_version == 4
        assert record.input("mass").tolerance == {
            "tolerance": "10 %",
            "low": "1080 kg",
            "high": "1320 kg",
            "text": "± 10 %",
        }
        data = sheet.record()
        assert record.tolerances == data["tolerances"]
        entry = data["tolerances"]["checks"][0]
        assert (entry["nominal_verdict"], entry["worst_verdict"], entry["governing_point"]) == (
            "met",
            "not met",
            "a corner",
        )
        assert data["tolerances"]["samples"] == {"n": 20_000, "distribution": "uniform", "seed": 3, "k": 3.0}

    def test_version_3_record_still_read(self):
        """A record written before bands (version 3) reads, with no bands and no study."""
        data = json.loads(magnification_sheet({}).to_json())
        data["record_version"] = 3
        data["seal"] = seal_of(data)
        record = read_record(json.dumps(data))
        assert record.record_version == 3 and record.tolerances == {} and record.inputs[0].tolerance is None

    def test_diff_names_a_changed_band(self):
        """calckit diff's comparison lists a band that changed, as the inputs table shows it."""
        from calckit.workflow.diff import diff_records

        old = magnification_sheet({"mass": {"tolerance": "10 %"}}).record()
        new = magnification_sheet({"mass": {"tolerance": "12 %"}, "speed": {"tolerance": "5 %"}}).record()
        report = diff_records(old, new, old_name="a.json", new_name="b.json")
        assert [(c.name, c.old, c.new) for c in report.details] == [
            ("tolerance of mass", "± 10 %", "± 12 %"),
            ("tolerance of speed", "no band", "± 5 %"),
        ]

    def test_band_enters_the_fingerprint(self):
        plain, banded = magnification_sheet({}), magnification_sheet({"mass": {"tolerance": "10 %"}})
        wider = magnification_sheet({"mass": {"tolerance": "12 %"}})
        assert len({plain.fingerprint, banded.fingerprint, wider.fingerprint}) == 3
