"""The sheet's typed, versioned record (written, read back, refused) and how a sheet is saved.

Scenario (invented for the demo): pump P-101 at the Harrow Creek water-treatment works,
the small sheet of tests/test_sheet.py.
"""

from __future__ import annotations

import json

import pytest

import calckit as ck
from tests.test_sheet import GOLDEN, small_sheet


class TestRecord:
    """The typed, versioned record: written by the sheet, read back by read_record."""

    def test_round_trip_from_text_and_file(self, tmp_path):
        """What the sheet writes reads back field for field, from its text and from its file."""
        sheet = small_sheet(figure=False)
        sheet.table(["n", "amplitude"], [[1, ck.Q_(0.123456, "mm")]], caption="Harmonics")
        sheet.note("A note.")
        written = sheet.to_record()
        assert ck.read_record(sheet.to_json()) == written
        path = sheet.save(tmp_path / "sheet.json")
        assert ck.read_record(path) == written
        assert ck.read_record(str(path)) == written
        assert ck.read_record(path).to_dict() == sheet.record() == json.loads(path.read_text())
        assert written.to_json() == sheet.to_json()

    def test_typed_attributes(self):
        """The attributes the diff and the batch summary read, typed, with the values the sheet holds."""
        record = ck.read_record(small_sheet(figure=False).to_json())
        assert record.record_version == ck.RECORD_VERSION == 4  # 3: results with their working; 4: bands
        assert record.calckit_version == ck.__version__
        assert record.fingerprint == small_sheet(figure=False).fingerprint
        assert record.title_block.subject == "Pump P-101 on spring isolators"
        assert record.title_block.revision == "B" and record.title_block.checker == "L. Brandt"
        k = record.input("k")
        # 180 kN/m = 180000 N/m (hand arithmetic)
        assert (k.text, k.value, k.unit, k.source) == (
            "180 kN/m",
            180000.0,
            "N/m",
            "Isolator data (invented)",
        )
        omega_n = record.result("omega_n")
        # omega_n = sqrt(180000 / 250) rad/s (hand arithmetic)
        assert omega_n.value == pytest.approx((180000 / 250) ** 0.5) and omega_n.unit == "rad/s"
        deflection = record.checks[0]
        # delta_st = m g / k = 250 * 9.80665 / 180000 m = 13.62 mm (hand arithmetic)
        assert deflection.value == pytest.approx(13.62034722, rel=1e-6) and deflection.limit == 25.0
        assert (
            deflection.relation == "<="
            and deflection.met
            and deflection.basis == "Isolator travel (invented)"
        )
        assert deflection.margin == pytest.approx((25 - 13.62034722) / 25 * 100, rel=1e-6)
        assert record.checks_met == 2
        assert record.input("absent") is None and record.result("absent") is None

    def test_record_is_frozen(self):
        """A record read back cannot be changed by mistake."""
        import dataclasses

        record = small_sheet(figure=False).to_record()
        with pytest.raises(dataclasses.FrozenInstanceError):
            record.fingerprint = "0" * 64
        with pytest.raises(dataclasses.FrozenInstanceError):
            record.inputs[0].value = 1.0

    def test_version_0_record_is_read(self):
        """A record written before record_version existed (the golden file less that field) reads as version 0."""
        data = json.loads(GOLDEN.read_text())
        del data["record_version"]
        old = ck.read_record(json.dumps(data), where="old.json")
        assert old.record_version == 0
        assert [i.name for i in old.inputs] == ["m", "k"] and old.checks[1].unit == "percent"
        expected = {**json.loads(GOLDEN.read_text()), "record_version": 0}
        del expected[
            "seal"
        ]  # records before the seal had none; a version-0 record is written back without one
        assert old.to_dict() == expected
        # the parts a record could lack then are read as empty
        for key in ("derivations", "tables", "assumptions", "references", "notes", "caution"):
            del data[key]
        bare = ck.read_record(json.dumps(data))
        assert bare.derivations == () and bare.caution == "" and bare.checks == old.checks

    def test_version_0_record_missing_fields_refused(self):
        """An old record that lacks what a record holds is refused, naming what is missing and what to do."""
        data = json.loads(GOLDEN.read_text())
        for key in ("record_version", "fingerprint", "checks"):
            del data[key]
        with pytest.raises(ck.SheetError) as info:
            ck.read_record(json.dumps(data), where="old.json")
        assert str(info.value) == (
            "old.json: the record without a record_version (written by an older calckit) has no fingerprint, "
            "checks. Rebuild the sheet with this calckit (calckit build TEMPLATE --inputs FILE --out DIR)."
        )

    def test_part_that_does_not_fit_refused(self):
        """A field of the wrong kind is refused with the part named."""
        data = json.loads(GOLDEN.read_text())
        data["inputs"][1]["value"] = "lots"
        with pytest.raises(ck.SheetError) as info:
            ck.read_record(json.dumps(data), where="x.json")
        assert str(info.value).startswith(
            "x.json, inputs[1]: value is 'lots', not of the kind a record holds."
        )
        data = json.loads(GOLDEN.read_text())
        del data["checks"][0]["limit"]
        with pytest.raises(ck.SheetError, match=r"^x\.json, checks\[0\]: no limit\. Rebuild the sheet"):
            ck.read_record(json.dumps(data), where="x.json")
        data = json.loads(GOLDEN.read_text())
        data["fingerprint"] = "abc"
        with pytest.raises(
            ck.SheetError, match=r"^x\.json, fingerprint: the fingerprint is not 64 hexadecimal"
        ):
            ck.read_record(json.dumps(data), where="x.json")

    def test_newer_version_refused(self):
        """A record of a newer version than this calckit knows is refused, saying so."""
        data = {**json.loads(GOLDEN.read_text()), "record_version": ck.RECORD_VERSION + 1}
        with pytest.raises(ck.SheetError) as info:
            ck.read_record(json.dumps(data), where="new.json")
        assert str(info.value) == (
            f"new.json: the record is of version {ck.RECORD_VERSION + 1}, newer than this calckit reads "
            f"({ck.RECORD_VERSION}). Read it with the calckit that built it or a newer one "
            "(pip install --upgrade calckit)."
        )

    @pytest.mark.parametrize("version", ["1", -1, True, 1.5])
    def test_bad_version_refused(self, version):
        data = {**json.loads(GOLDEN.read_text()), "record_version": version}
        with pytest.raises(ck.SheetError, match=r"^record: the record version .* is not a whole number"):
            ck.read_record(json.dumps(data))

    def test_not_a_record_refused(self, tmp_path):
        """A missing file, text that is not JSON, or JSON that is not an object are refused with a message."""
        with pytest.raises(ck.SheetError, match=r"no-such\.json: cannot read the record"):
            ck.read_record(tmp_path / "no-such.json")
        (tmp_path / "bad.json").write_text("{ not json")
        with pytest.raises(
            ck.SheetError, match=r"bad\.json: the record is not JSON \(.* at line 1, column 3\)"
        ):
            ck.read_record(tmp_path / "bad.json")
        (tmp_path / "list.json").write_text("[1, 2]")
        with pytest.raises(ck.SheetError, match=r"list\.json: a record is a JSON object, got list"):
            ck.read_record(tmp_path / "list.json")

    def test_golden_file_reads(self):
        """The golden record reads back and writes out unchanged."""
        assert ck.read_record(GOLDEN).to_dict() == json.loads(GOLDEN.read_text())


class TestSaving:
    """Every file goes through the one writer, with the permissions of a new file."""

    @pytest.mark.parametrize("suffix", [".json", ".html"])
    def test_saved_mode_follows_umask(self, tmp_path, suffix):
        """A saved sheet is readable by others (0o666 & ~umask: 0o644 under umask 022), not private."""
        import os
        import stat

        old = os.umask(0o022)
        try:
            path = small_sheet(figure=False).save(tmp_path / f"sheet{suffix}")
            resaved = small_sheet(figure=False).save(path)  # same fingerprint: replaced in place
        finally:
            os.umask(old)
        assert stat.S_IMODE(path.stat().st_mode) == 0o666 & ~0o022 == 0o644
        assert stat.S_IMODE(resaved.stat().st_mode) == 0o644
        assert [p.name for p in tmp_path.iterdir()] == [f"sheet{suffix}"]  # no temporary file left

    def test_saved_mode_under_another_umask(self, tmp_path):
        import os
        import stat

        old = os.umask(0o077)
        try:
            path = small_sheet(figure=False).save(tmp_path / "sheet.json")
        finally:
            os.umask(old)
        assert stat.S_IMODE(path.stat().st_mode) == 0o666 & ~0o077

    def test_no_private_writer_left(self):
        """The sheet has no writer of its own any more."""
        import calckit.sheet.sheet as module

        assert not hasattr(module, "_atomic_write")
        assert module.write_file is ck.core.files.write_file

    def test_pdf_goes_through_the_writer(self, tmp_path, monkeypatch):
        """The PDF Chromium prints privately is written by write_file (0644), and an existing PDF of
        other inputs is refused before printing. A stand-in Chromium writes a fixed PDF."""
        import os
        import stat

        fake = tmp_path / "fake-chromium"
        fake.write_text(
            '#!/bin/sh\nfor a in "$@"; do case "$a" in --print-to-pdf=*) '
            "printf '%%PDF-1.4 fake' > \"${a#--print-to-pdf=}\";; esac; done\n"
        )
        fake.chmod(0o755)
        monkeypatch.setenv("CALCKIT_CHROMIUM", str(fake))
        out = tmp_path / "out"
        old = os.umask(0o022)
        try:
            sheet = small_sheet(figure=False)
            sheet.save(out / "sheet.json")
            pdf = sheet.save(out / "sheet.pdf")
        finally:
            os.umask(old)
        assert pdf.read_bytes() == b"%PDF-1.4 fake"
        assert stat.S_IMODE(pdf.stat().st_mode) == 0o644
        assert sorted(p.name for p in out.iterdir()) == ["sheet.json", "sheet.pdf"]
        fake.write_text("#!/bin/sh\nexit 7\n")  # a second print would fail: the refusal comes first
        with pytest.raises(ck.OverwriteError) as info:
            small_sheet(mass="300 kg", figure=False).save(pdf)
        assert "Pass overwrite=True to replace it, keep_both=True" in str(info.value)
        assert pdf.read_bytes() == b"%PDF-1.4 fake"

    def test_print_refuses_existing_file(self, tmp_path, monkeypatch):
        """html_to_pdf without overwrite refuses an existing file before it looks for Chromium."""
        from calckit.render.printing import html_to_pdf

        monkeypatch.setenv("CALCKIT_CHROMIUM", str(tmp_path / "no-such-chromium"))
        target = tmp_path / "x.pdf"
        target.write_bytes(b"kept")
        with pytest.raises(ck.OverwriteError, match=r"x\.pdf: the file exists already"):
            html_to_pdf("<p>x</p>", target)
        assert target.read_bytes() == b"kept"
        with pytest.raises(ck.SheetError, match="printing to PDF needs Chromium"):
            html_to_pdf("<p>x</p>", target, overwrite=True)
        assert target.read_bytes() == b"kept"


class TestSeal:
    """A record edited after it was built is noticed on every read (the seal: SHA-256 over the whole record)."""

    def test_written_records_are_sealed(self):
        """Sheet.record() and its JSON carry a seal over everything else the record holds."""
        data = json.loads(small_sheet().to_json())
        assert data["record_version"] == 4
        assert len(data["seal"]) == 64
        assert ck.read_record(json.dumps(data)).fingerprint == data["fingerprint"]

    @pytest.mark.parametrize(
        "edit",
        [
            lambda d: d["inputs"][0].update(text="9999 kg"),
            lambda d: d["results"][0].update(value=1.0),
            lambda d: d["checks"][0].update(verdict="met", met=True),
            lambda d: d.update(caution=""),
        ],
        ids=["input", "result", "verdict", "caution"],
    )
    def test_edited_record_refused(self, edit):
        """An input, a result, a verdict or the caution edited with the fingerprint kept: refused, said why."""
        data = json.loads(GOLDEN.read_text())
        edit(data)
        with pytest.raises(ck.SheetError) as info:
            ck.read_record(json.dumps(data), where="edited.json")
        assert str(info.value) == (
            "edited.json: the record was changed after it was built: its seal does not match its content. "
            "Rebuild the sheet (calckit build) rather than edit its record; the sheet and its record are only "
            "evidence as the build wrote them."
        )

    def test_sealed_version_without_seal_refused(self):
        """A version-2 record with its seal removed is refused; a version-1 record (before seals) is read."""
        data = json.loads(GOLDEN.read_text())
        del data["seal"]
        with pytest.raises(ck.SheetError, match=r"^x\.json: the record has no seal\. Rebuild the sheet"):
            ck.read_record(json.dumps(data), where="x.json")
        assert ck.read_record(json.dumps({**data, "record_version": 1})).record_version == 1

    def test_diff_refuses_an_edited_record(self, tmp_path):
        """calckit diff's record finder refuses a record edited after the build, also given as a folder."""
        from calckit.workflow.diff import load_built_record

        data = json.loads(GOLDEN.read_text())
        data["results"][0]["value"] = 1.0
        folder = tmp_path / "built"
        folder.mkdir()
        (folder / "sheet.json").write_text(json.dumps(data), encoding="utf-8")
        with pytest.raises(ck.SheetError, match="changed after it was built"):
            load_built_record(folder)


class TestWorking:
    """Record version 3: every result carries its working; versions 1 and 2 are still read."""

    def test_every_result_carries_its_working(self):
        """The written record gives each result a kind of working and its text, and the seal covers them."""
        data = json.loads(small_sheet(figure=False).to_json())
        kinds = {r["name"]: r["working"]["kind"] for r in data["results"]}
        assert kinds == {
            "omega_n": "derivation",
            "omega_rad_s": "formula",  # 1480 rpm in rad/s, a step of its own
            "running_speed_vs_natural_frequency": "formula",  # the separation, a step of its own
        }
        assert all(c["utilisation"] is not None for c in data["checks"])
        data["results"][0]["working"]["text"] = "made up"
        with pytest.raises(ck.SheetError, match="its seal does not match its content"):
            ck.read_record(json.dumps(data))

    def test_version_3_result_without_working_refused(self):
        """A version-3 record whose result lost its working (seal rewritten) is refused, naming the result."""
        from calckit.sheet.record import seal_of

        data = json.loads(GOLDEN.read_text())
        del data["results"][0]["working"]
        data["seal"] = seal_of(data)
        with pytest.raises(ck.SheetError) as info:
            ck.read_record(json.dumps(data), where="x.json")
        assert str(info.value).startswith(
            "x.json, results[0]: the result 'omega_n' has no working of a known kind "
            "(formula, derivation, input, table, procedure)."
        )

    def test_version_2_record_without_working_read(self):
        """A version-2 record (sealed, results without working, checks without utilisation) still reads."""
        from calckit.sheet.record import seal_of

        data = json.loads(GOLDEN.read_text())
        data["record_version"] = 2
        for item in data["results"]:
            item.pop("working")
        for item in data["checks"]:
            item.pop("utilisation")
        data["seal"] = seal_of(data)
        old = ck.read_record(json.dumps(data))
        assert (
            old.record_version == 2 and old.results[0].working is None and old.checks[0].utilisation is None
        )
