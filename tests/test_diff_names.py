"""calckit diff names sheets and results as the sheets do, and a renamed inputs file is no change of source.

Outside reference: none is needed for names; the values are those the sheets print (hand checks
beside them are the sheets' own tests).
"""

from __future__ import annotations

import calckit as ck
from calckit.workflow.diff import diff_records


def _sheet(inputs_file: str, stiffness: str = "180 kN/m", revision: str = "A") -> dict:
    """Pump P-101 at Harrow Creek (invented), its inputs taken from *inputs_file*."""
    sheet = ck.Sheet(
        "Pump P-101", number="HCW-VIB-001", revision=revision, inputs_file=inputs_file, show=False
    )
    sheet.given("m", "250 kg", "m", "Pump and base", "mass")
    sheet.given("k", stiffness, "k", "Isolators together", "stiffness")
    sheet.calc("omega_n", "sqrt(k/m)", unit="rad/s", title="Natural frequency")
    return sheet.record()


def test_renamed_inputs_file_is_not_a_change_of_source():
    """The same inputs from a file renamed: same fingerprint, no source reported as changed."""
    old, new = _sheet("p101.toml"), _sheet("p101-copy.toml")
    report = diff_records(old, new)
    assert report.same_fingerprint and not report.details and not report.anything


def test_a_real_source_change_is_still_reported():
    """A source that is not the inputs file's name is compared as before."""
    old, new = _sheet("p101.toml"), _sheet("p101.toml")
    new["inputs"][0]["source"] = "Vendor drawing P-101-GA rev C (invented)"
    report = diff_records(old, new)
    assert [c.name for c in report.details] == ["source of m"]


def test_sheets_and_results_named_as_the_sheets_name_them():
    """Each sheet by number, revision and fingerprint; each result under its step's title, as shown."""
    old, new = _sheet("p101.toml"), _sheet("p101.toml", stiffness="200 kN/m", revision="B")
    report = diff_records(old, new)
    lines = report.text().splitlines()
    assert lines[:2] == [
        f"Old: HCW-VIB-001 rev A, fingerprint {old['fingerprint'][:12]}",
        f"New: HCW-VIB-001 rev B, fingerprint {new['fingerprint'][:12]}",
    ]
    # sqrt(180000/250) = 26.83 rad/s and sqrt(200000/250) = 28.28 rad/s (hand arithmetic), +5.4 %
    assert "  Natural frequency (omega_n): 26.83 rad/s -> 28.28 rad/s (+5.4 %)" in lines
