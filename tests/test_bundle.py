"""Tests of shareable bundles (engine.storage.bundle).

The zip files, honest and malicious, are built here with the standard library's ``zipfile``; header fields are
patched at the offsets the ZIP specification gives (PKWARE APPNOTE.TXT 6.3.x, sections 4.3.7 local file header
and 4.3.12 central directory header; the Unix mode in the high 16 bits of "external file attributes" as written
by Info-ZIP). The attacks are the classic ones catalogued as "Zip Slip" (Snyk security research, 2018:
path traversal through archive entry names) and zip bombs (D. Fifield, 2019, "A better zip bomb", WOOT '19).
Tables are judged by ``pandas.testing.assert_frame_equal``.

The header offsets and the citations are given from memory; the tests confirm each patched offset by reading the
patched value back with ``zipfile``.
"""

from __future__ import annotations

import gzip
import hashlib
import io
import json
import stat
import tarfile
import warnings
import zipfile
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from pandas.testing import assert_frame_equal
from test_store import INPUTS, synthetic_result

from engine.storage.bundle import (
    BundleError,
    export_bundle,
    read_bundle,
)
from engine.model.results import RunResult
from engine.storage.safezip import ZipLimits
from engine import cautions


def bundle_result() -> RunResult:
    """The synthetic result with the columns a CSV table carries exactly (no categories, dates or objects)."""
    result = synthetic_result(2)
    edge = result.tables["edge"].drop(columns=["mixed", "category", "when"])
    edge["text_object"] = np.array(["a", None, "b", "", "c, d"], dtype=object)
    edge["awkward text"] = pd.array(["\r", "a\r\nb", "  lead", "#1", "é€😀"], dtype="str")
    result.tables["edge"] = edge
    return result


def tree(folder: Path) -> list[str]:
    return sorted(str(p.relative_to(folder)) for p in folder.rglob("*"))


@pytest.fixture
def honest(tmp_path) -> Path:
    return export_bundle(bundle_result(), INPUTS, tmp_path / "shared" / "city.zip")


def entries_of(path: Path) -> list[tuple[zipfile.ZipInfo, bytes]]:
    with zipfile.ZipFile(path) as archive:
        return [(info, archive.read(info)) for info in archive.infolist()]


def write_zip(path: Path, entries, compression=zipfile.ZIP_DEFLATED) -> Path:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # zipfile warns about duplicate names, which one attack needs
        with zipfile.ZipFile(path, "w", compression) as archive:
            for info, data in entries:
                archive.writestr(info, data)
    return path


def tampered(honest: Path, out: Path, add=(), replace=None, drop=()) -> Path:
    """The honest bundle with entries added, replaced or dropped."""
    replace = replace or {}
    entries = []
    for info, data in entries_of(honest):
        if info.filename in drop:
            continue
        entries.append((info.filename, replace.get(info.filename, data)))
    entries.extend(add)
    return write_zip(out, entries)


def patch_header(data: bytes, name: str, *, central_offset: int, local_offset: int | None, value: bytes) -> bytes:
    """Overwrite a field of entry ``name`` in its central directory header and (optionally) local header.

    Offsets per APPNOTE.TXT 4.3.12 (central: flags at 8, uncompressed size at 24) and 4.3.7 (local: flags at 6,
    uncompressed size at 22).
    """
    buffer = bytearray(data)
    encoded = name.encode()
    central = buffer.find(b"PK\x01\x02")
    while central >= 0:
        name_length = int.from_bytes(buffer[central + 28 : central + 30], "little")
        if bytes(buffer[central + 46 : central + 46 + name_length]) == encoded:
            buffer[central + central_offset : central + central_offset + len(value)] = value
            local = int.from_bytes(buffer[central + 42 : central + 46], "little")
            if local_offset is not None:
                buffer[local + local_offset : local + local_offset + len(value)] = value
            return bytes(buffer)
        central = buffer.find(b"PK\x01\x02", central + 4)
    raise AssertionError(f"{name} not found")


# ====================================================================================== round trip
def test_round_trip_gives_the_same_files_and_tables(honest, tmp_path):
    """Export then read: input files byte for byte, tables equal under assert_frame_equal, manifest complete."""
    result = bundle_result()
    contents = read_bundle(honest, tmp_path / "opened")
    assert contents.input_folder == (tmp_path / "opened" / "inputs").resolve()
    assert {p.name: p.read_bytes() for p in contents.input_folder.iterdir()} == INPUTS
    assert list(contents.tables) == list(result.tables)
    for name, frame in result.tables.items():
        assert_frame_equal(contents.tables[name], frame, check_exact=True, check_column_type=True)
    manifest = contents.manifest
    assert manifest["format"] == "heatmosaic-bundle" and manifest["format_version"] == 1
    for key in ("input_hash", "cost_case", "objective", "scenario_name", "status"):
        assert manifest[key] == getattr(result, key)
    assert manifest["settings"]["co2_cap_t_per_a"] is None  # inf is not JSON (RFC 8259 section 6)
    assert manifest["summary"]["total_cost_eur_per_a"] == pytest.approx(result.total_cost_eur_per_a)
    assert manifest["caution"] == cautions.RESULTS
    assert contents.summary["total_cost_eur_per_a"] == pytest.approx(result.summary()["total_cost_eur_per_a"])
    back = contents.to_result()
    assert back.input_hash == result.input_hash and back.total_cost_eur_per_a == result.total_cost_eur_per_a
    assert sorted(tree(tmp_path / "opened"))[:1] == ["inputs"]
    assert not any(name.startswith(".incoming") for name in tree(tmp_path / "opened"))


def test_read_from_bytes_and_from_an_uploaded_file_object(honest, tmp_path):
    """The dashboard passes bytes or a file object (io.BytesIO) instead of a path; both read the same."""
    data = honest.read_bytes()
    from_bytes = read_bundle(data, tmp_path / "a")
    from_file = read_bundle(io.BytesIO(data), tmp_path / "b")
    for name in from_bytes.tables:
        assert_frame_equal(from_bytes.tables[name], from_file.tables[name], check_exact=True)


def test_own_highly_compressible_tables_stay_readable(tmp_path):
    """A table of zeros deflates > 100 times; export stores it uncompressed so the bomb check accepts it."""
    zeros = pd.DataFrame({"step": np.zeros(400_000, dtype=np.int64), "heat_kw": np.zeros(400_000)})
    result = RunResult(status="optimal", message="", tables={"dispatch": zeros})
    path = export_bundle(result, INPUTS, tmp_path / "zeros.zip")
    with zipfile.ZipFile(path) as archive:
        assert archive.getinfo("results/dispatch.csv").compress_type == zipfile.ZIP_STORED
    contents = read_bundle(path, tmp_path / "out")
    assert_frame_equal(contents.tables["dispatch"], zeros, check_exact=True)


def test_columns_without_a_csv_form_come_back_as_text(tmp_path):
    """Categories and datetimes travel as text; the manifest keeps their original dtype (documented)."""
    frame = pd.DataFrame({"kind": pd.Categorical(["hp", None]), "when": pd.to_datetime(["2040-01-01", None])})
    result = RunResult(status="optimal", message="", tables={"odd": frame})
    contents = read_bundle(export_bundle(result, {}, tmp_path / "odd.zip"), tmp_path / "out")
    back = contents.tables["odd"]
    assert back["kind"].tolist()[0] == "hp" and pd.isna(back["kind"].iloc[1])
    assert back["when"].iloc[0] == str(pd.Timestamp("2040-01-01"))
    specs = {c["name"]: c for c in contents.manifest["tables"]["odd"]["columns"]}
    assert specs["kind"]["original"] == "category" and specs["when"]["dtype"] == "text"
    assert contents.manifest["missing_required_inputs"] == ["scenario.toml", "districts.geojson",
                                                           "technologies.csv", "hourly.csv"]


def test_export_refuses_what_a_reader_would_refuse(tmp_path):
    """Export fails with BundleError for unknown input names, non-UTF-8 inputs and unsafe table names."""
    result = bundle_result()
    with pytest.raises(BundleError, match="not a scenario file name"):
        export_bundle(result, {"run.py": b"print(1)"}, tmp_path / "a.zip")
    with pytest.raises(BundleError, match="not UTF-8"):
        export_bundle(result, {"hourly.csv": "hour\n0,é\n".encode("cp1252")}, tmp_path / "b.zip")
    bad = RunResult(status="optimal", message="", tables={"../evil": pd.DataFrame({"x": [1]})})
    with pytest.raises(BundleError, match="table name"):
        export_bundle(bad, {}, tmp_path / "c.zip")
    assert tree(tmp_path) == []


# ====================================================================================== refused bundles
def zip_bytes(entries) -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        for info, data in entries:
            archive.writestr(info, data)
    return buffer.getvalue()


def symlink_entry(name: str, target: str):
    info = zipfile.ZipInfo(name)
    info.create_system = 3  # Unix, so the high 16 bits of external_attr are a st_mode (APPNOTE 4.4.15)
    info.external_attr = (stat.S_IFLNK | 0o777) << 16
    return info, target.encode()


def tar_bytes() -> bytes:
    buffer = io.BytesIO()
    with tarfile.open(fileobj=buffer, mode="w") as archive:
        data = b"hour,outdoor_temp_c\n0,1\n"
        info = tarfile.TarInfo("hourly.csv")
        info.size = len(data)
        archive.addfile(info, io.BytesIO(data))
    return buffer.getvalue()


ATTACKS = {
    "parent path": (dict(add=[("../evil.txt", b"owned")]), r"climbs out .*'\.\.'"),
    "parent path inside a folder": (dict(add=[("inputs/../../evil.txt", b"owned")]), r"'\.\.'"),
    "absolute path": (dict(add=[("/etc/x", b"owned")]), "absolute path"),
    "drive letter": (dict(add=[("C:/evil.txt", b"owned")]), "drive letter"),
    "drive-relative path": (dict(add=[("C:evil.txt", b"owned")]), "drive letter"),
    "backslashes": (dict(add=[("inputs\\..\\..\\evil.txt", b"owned")]), "backslash"),
    "symbolic link": (dict(add=[symlink_entry("inputs/wells.csv", "../../evil.txt")]), "symbolic link"),
    "nested zip": (dict(add=[("inputs/inner.zip", zip_bytes([("x.csv", b"a")]))]), "nested archives"),
    "zip disguised as csv": (dict(add=[("inputs/wells.csv", zip_bytes([("x.csv", b"a")]))]), "archive inside"),
    "gzip disguised as csv": (dict(add=[("inputs/wells.csv", gzip.compress(b"a,b\n1,2\n"))]), "archive inside"),
    "tar disguised as csv": (dict(add=[("inputs/wells.csv", tar_bytes())]), "archive inside"),
    "unknown file name": (dict(add=[("scripts/setup.py", b"import os")]), "not a file a heatmosaic zip may hold"),
    "pickled table": (dict(add=[("results/districts.pkl", b"\x80\x04K\x01.")]), "may hold"),
    "non-UTF-8 text": (dict(replace={"inputs/hourly.csv": "hour,name\n0,Süd\n".encode("latin-1")}), "not UTF-8"),
    "NUL bytes": (dict(replace={"inputs/hourly.csv": b"hour\x00\n0\n"}), "NUL"),
    "manifest not JSON": (dict(replace={"manifest.json": b"{'format': 'heatmosaic-bundle',"}), "not valid JSON"),
    "manifest not an object": (dict(replace={"manifest.json": b"[1, 2, 3]"}), "JSON object"),
    "no manifest": (dict(drop=["manifest.json"]), "no manifest.json"),
    "entry twice": (dict(add=[("inputs/hourly.csv", b"hour\n0\n")]), "appears twice"),
    "altered input": (dict(replace={"inputs/hourly.csv": b"hour,outdoor_temp_c\n0,35.0\n1,-4.0\n"}), "checksum"),
    "altered table": (dict(replace={"results/wells.csv": b"well_id\nW9\n"}), "checksum"),
    "unlisted table": (dict(add=[("results/extra.csv", b"x\n1\n")]), "not described"),
    "too many entries": (dict(add=[(f"results/t{i}.csv", b"x\n1\n") for i in range(200)]), "more than the 200"),
    "deflated more than 100 times": (dict(add=[("inputs/wells.csv", b"0,0\n" * (5 << 18))]), "zip bomb"),
}


@pytest.mark.parametrize("attack", list(ATTACKS))
def test_malicious_bundles_are_refused_and_nothing_is_written(attack, honest, tmp_path):
    """Each attack gives BundleError with a plain reason; nothing appears outside dest, nothing stays inside.

    References: Snyk, "Zip Slip" (2018) for path traversal, drive letters, backslashes and symbolic links;
    Fifield (2019) for compression-ratio bombs and nested archives; PKWARE APPNOTE.TXT for the zip layout;
    RFC 8259 for JSON and RFC 3629 for UTF-8.
    """
    changes, message = ATTACKS[attack]
    evil = tampered(honest, tmp_path / "evil.zip", **changes)
    dest = tmp_path / "sandbox" / "dest"
    before = tree(tmp_path)
    etc_x_existed = Path("/etc/x").exists()
    with pytest.raises(BundleError, match=message) as caught:
        read_bundle(evil, dest)
    assert "Traceback" not in str(caught.value) and len(str(caught.value)) < 400
    assert tree(dest) == []
    assert [p for p in tree(tmp_path) if not p.startswith("sandbox")] == before
    assert not (tmp_path / "sandbox" / "evil.txt").exists() and not (tmp_path / "evil.txt").exists()
    assert Path("/etc/x").exists() == etc_x_existed


def test_a_200_megabyte_bomb_is_refused_from_its_header(honest, tmp_path):
    """200 MiB of zeros packed into < 1 MiB: refused before unpacking (limit 100 MiB per file)."""
    evil = tmp_path / "bomb.zip"
    with zipfile.ZipFile(evil, "w", zipfile.ZIP_DEFLATED, compresslevel=1) as archive:
        for info, data in entries_of(honest):
            archive.writestr(info.filename, data)
        with archive.open("inputs/wells.csv", "w", force_zip64=True) as member:
            chunk = b"0" * (1 << 20)
            for _ in range(200):
                member.write(chunk)
    assert evil.stat().st_size < 2 << 20
    dest = tmp_path / "dest"
    with pytest.raises(BundleError, match="MiB allowed for one file"):
        read_bundle(evil, dest)
    assert tree(dest) == []


def test_a_header_that_understates_the_size_does_not_help(honest, tmp_path):
    """An entry whose headers claim 1000 bytes but which unpacks to 3 MiB is refused while streaming.

    The declared size passes the directory check (under the 1 MiB ratio floor); the stream does not agree
    with it. Field offsets from APPNOTE.TXT 4.3.7 and 4.3.12.
    """
    big = b"0,0\n" * (3 << 18)
    evil_bytes = tampered(honest, tmp_path / "evil.zip", add=[("inputs/wells.csv", big)]).read_bytes()
    lying = (1000).to_bytes(4, "little")
    evil_bytes = patch_header(evil_bytes, "inputs/wells.csv", central_offset=24, local_offset=22, value=lying)
    with zipfile.ZipFile(io.BytesIO(evil_bytes)) as archive:
        assert archive.getinfo("inputs/wells.csv").file_size == 1000
    dest = tmp_path / "dest"
    with pytest.raises(BundleError, match="wells.csv"):
        read_bundle(evil_bytes, dest)
    assert tree(dest) == []


def test_encrypted_entries_are_refused(honest, tmp_path):
    """General-purpose flag bit 0 (APPNOTE.TXT 4.4.4) marks an encrypted entry: refused unread."""
    data = patch_header(honest.read_bytes(), "inputs/hourly.csv", central_offset=8, local_offset=6,
                        value=(0x0001).to_bytes(2, "little"))
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        assert archive.getinfo("inputs/hourly.csv").flag_bits & 0x1
    with pytest.raises(BundleError, match="encrypted"):
        read_bundle(data, tmp_path / "dest")
    assert tree(tmp_path / "dest") == []


def test_limits_on_total_size_and_entry_count_are_enforced(honest, tmp_path):
    """Smaller limits show the total-size and entry-count checks at work without writing big files."""
    with pytest.raises(BundleError, match="in total"):
        read_bundle(honest, tmp_path / "a", limits=ZipLimits(max_total_bytes=4096))
    with pytest.raises(BundleError, match="more than the 5 allowed"):
        read_bundle(honest, tmp_path / "b", limits=ZipLimits(max_entries=5))
    with pytest.raises(BundleError, match="allowed for one file"):
        read_bundle(honest, tmp_path / "c", limits=ZipLimits(max_entry_bytes=100))
    assert tree(tmp_path / "a") == tree(tmp_path / "b") == tree(tmp_path / "c") == []


def test_a_bad_cell_is_named_by_file_row_and_column(honest, tmp_path):
    """A table cell that is not a number (checksum updated to match) is reported with file, row and column.

    Row numbers count the header as row 1, as a spreadsheet shows them (docs/input_format.md).
    """
    entries = dict((info.filename, data) for info, data in entries_of(honest))
    lines = entries["results/wells.csv"].decode().splitlines()
    header = lines[0].split(",")
    cells = lines[1].split(",")
    cells[header.index('"annual_volume_m3"')] = "lots"
    lines[1] = ",".join(cells)
    table = ("\n".join(lines) + "\n").encode()
    manifest = json.loads(entries["manifest.json"])
    manifest["tables"]["wells"]["sha256"] = hashlib.sha256(table).hexdigest()
    bad = tampered(honest, tmp_path / "bad.zip", replace={"results/wells.csv": table,
                                                           "manifest.json": json.dumps(manifest).encode()})
    with pytest.raises(BundleError, match=r"results/wells.csv, row 2, column 'annual_volume_m3': 'lots' is not a"):
        read_bundle(bad, tmp_path / "dest")
    assert tree(tmp_path / "dest") == []


def test_plain_errors_for_files_that_are_not_bundles(honest, tmp_path):
    """Not a zip, a newer format, or a destination that already holds a bundle: BundleError, plain words."""
    (tmp_path / "notes.zip").write_text("hello")
    with pytest.raises(BundleError, match="not a readable zip"):
        read_bundle(tmp_path / "notes.zip", tmp_path / "a")
    with pytest.raises(BundleError, match="cannot open"):
        read_bundle(tmp_path / "missing.zip", tmp_path / "a")
    manifest = json.loads(entries_of(honest)[0][1])
    manifest["format_version"] = 99
    newer = tampered(honest, tmp_path / "newer.zip", replace={"manifest.json": json.dumps(manifest).encode()})
    with pytest.raises(BundleError, match="newer heatmosaic"):
        read_bundle(newer, tmp_path / "b")
    read_bundle(honest, tmp_path / "c")
    with pytest.raises(BundleError, match="already holds"):
        read_bundle(honest, tmp_path / "c")
