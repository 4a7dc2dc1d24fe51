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
