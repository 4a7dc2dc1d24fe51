"""Tests of calckit.workflow.input_conventions: { value, convention } in inputs files."""

import pytest

from calckit.errors import InputsError
from calckit.workflow.inputs import check_keys, read_inputs


def test_value_with_convention(tmp_path):
    path = tmp_path / "p102.toml"
    path.write_text(
        '[acceptance]\nvelocity_limit = { value = "4.5 mm/s", convention = "RMS", source = "spec" }\n'
    )
    found = read_inputs(path)
    assert dict(found.values) == {"velocity_limit": "4.5 mm/s", "velocity_limit_convention": "rms"}
    assert dict(found.sources) == {"velocity_limit": "spec"}
    assert found.where("velocity_limit_convention") == f"{path}, line 2, velocity_limit_convention"


def test_unknown_convention_on_reading(tmp_path):
    path = tmp_path / "p102.toml"
    path.write_text('velocity_limit = { value = "4.5 mm/s", convention = "mean" }\n')
    with pytest.raises(InputsError) as err:
        read_inputs(path)
    assert str(err.value).startswith(
        f'{path}, line 1, velocity_limit: "mean" is not an amplitude convention.'
    )


def test_limit_without_its_convention(tmp_path):
    path = tmp_path / "p102.toml"
    path.write_text('velocity_limit = "4.5 mm/s"\n')
    with pytest.raises(InputsError) as err:
        check_keys(read_inputs(path), {"velocity_limit": "", "velocity_limit_convention": ""}, path=path)
    assert str(err.value) == (
        f'{path}: the amplitude "velocity_limit" on line 1 does not say whether it is peak, peak-to-peak or rms: '
        'write velocity_limit = { value = "4.5 mm/s", convention = "rms" } (or "peak", "peak-to-peak"). '
        "The template's inputs are velocity_limit, velocity_limit_convention."
    )


@pytest.mark.parametrize("peak_mm_s", [0.95, 1.05])
def test_limit_in_each_convention_from_a_file_gives_one_verdict(tmp_path, peak_mm_s):
    """1 mm/s peak written as peak, as 0.7071 mm/s rms and as 2 mm/s pk-pk (one harmonic: rms = peak / sqrt 2,
    pk-pk = 2 peak, closed forms): read from an inputs file, the sheet's check gives one verdict for all three."""
    import calckit as ck

    verdicts = []
    for written in (
        '"1.0 mm/s", convention = "peak"',
        '"0.7071 mm/s", convention = "rms"',
        '"2 mm/s", convention = "pk-pk"',
    ):
        path = tmp_path / "limit.toml"
        path.write_text(f"velocity_limit = {{ value = {written} }}\n")
        values = read_inputs(path).values
        sheet = ck.Sheet("IC-302 check (invented)", show=False)
        sheet.result("V", ck.Q_(peak_mm_s, "mm/s"), working=("input", "Harrow Creek survey (invented)"))
        check = sheet.amplitude_check(
            "velocity", "V", values["velocity_limit"], result_convention="peak",
            limit_convention=values["velocity_limit_convention"],
        )  # fmt: skip
        verdicts.append(check.met)
    assert verdicts == [peak_mm_s < 1.0] * 3
