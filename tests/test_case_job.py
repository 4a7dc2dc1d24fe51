"""A batch case as self-contained data: the data files it carries, and a case that fails before any kernel."""

from __future__ import annotations

import pickle
from pathlib import Path

import pytest

from calckit.errors import InputsError
from calckit.workflow.case_job import BuiltCase, CaseJob, _data_file, build_case, data_payload


def test_data_files_travel_as_bytes_read_once(tmp_path):
    record = tmp_path / "b402_trip.csv"
    record.write_bytes(b"time (s),acceleration (g_n)\n0,0\n0.01,0.2\n")
    read: dict = {}
    first = data_payload(
        {"record_file": "b402_trip.csv", "mass": "1 kg"}, frozenset({"record_file"}), tmp_path, {}, read
    )
    assert first == {"record_file": (str(record.resolve()), record.read_bytes())}
    record.write_bytes(b"changed after the batch read it\n")
    again = data_payload({"record_file": str(record)}, frozenset({"record_file"}), tmp_path, {}, read)
    assert again["record_file"][1] is first["record_file"][1]  # one read, one copy held for all cases


def test_a_missing_data_file_is_refused_where_it_is_named(tmp_path):
    with pytest.raises(InputsError) as info:
        data_payload(
            {"record_file": "gone.csv"},
            frozenset({"record_file"}),
            tmp_path,
            {"record_file": "p.toml, line 12"},
        )
    assert str(info.value) == (
        'p.toml, line 12: the data file "gone.csv" cannot be read (No such file or directory). Give the path of '
        "an existing file, relative to the inputs file."
    )


def test_a_worker_reads_the_original_only_when_it_holds_the_same_bytes(tmp_path):
    original = tmp_path / "shared" / "trip.csv"
    original.parent.mkdir()
    original.write_bytes(b"same")
    own = tmp_path / "worker"
    assert _data_file(original, b"same", own) == str(original)  # the same machine, or a shared file system
    assert not own.exists()
    copy = _data_file(original, b"other bytes", own)  # a worker elsewhere: its own copy
    assert copy == str(own / "trip.csv") and Path(copy).read_bytes() == b"other bytes"
    assert _data_file(tmp_path / "nowhere" / "trip.csv", b"x", own) == copy


def test_a_case_that_cannot_be_read_fails_without_raising_and_leaves_nothing(tmp_path, monkeypatch):
    monkeypatch.setattr("tempfile.tempdir", str(tmp_path))
    job = CaseJob("c1", "broken", "{ not a notebook", "templates/broken.ipynb", {}, {}, "label")
    job = pickle.loads(pickle.dumps(job))  # plain data: it pickles for any executor
    built = build_case(job)
    assert isinstance(built, BuiltCase) and not built.ok and built.files == {}
    assert built.message.startswith("templates/broken.ipynb: cannot read the template as a notebook.")
    assert list(tmp_path.iterdir()) == []  # the scratch folder is removed
