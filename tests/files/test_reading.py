"""infer.files.reading: every way a user's file can fail to open or decode gives one line.

The reference for each byte offset is Python's own UTF-8 codec (``bytes.decode``), and the
command-line shape (exit 2, one ``qhat: error:`` line naming the file, nothing written)
is docs/command-line.md, 'Exit status'.
"""

from __future__ import annotations

import codecs

import numpy as np
import pytest
from conftest import DEMO, call_qhat

from infer.errors import InputError
from infer.files import reading
from infer.files.claim import load_claim
from infer.files import loci
from infer.files.loci import read_loci, scan_loci
from infer.files.study import load_study

LOCI = "locus,observed,sampled,mu\nGENE1,1,1000,1e-6\nGENE2,0,800,2e-6\n"


def _first_bad_offset(data: bytes) -> int:
    """Source: CPython's UTF-8 codec, the offset of the first undecodable byte."""
    try:
        data.decode("utf-8")
    except UnicodeDecodeError as error:
        return error.start
    raise AssertionError("the sample decodes; the test is wrong")


def _message(call, *args) -> str:
    with pytest.raises(InputError) as caught:
        call(*args)
    return str(caught.value)


@pytest.fixture(params=["read_text", "open_text"])
def read(request):
    """Both readers: the whole file at once, and line by line."""
    if request.param == "read_text":
        return reading.read_text

    def by_lines(path):
        with reading.open_text(path, newline="") as handle:
            return "".join(handle)

    return by_lines


def test_missing_file(tmp_path, read):
    path = tmp_path / "absent.toml"
    line = _message(read, path)
    assert line == f"{path}: cannot read the file: no such file", line


def test_folder(tmp_path, read):
    line = _message(read, tmp_path)
    assert line == f"{tmp_path}: cannot read the file: it is a folder", line


def test_part_of_the_path_is_a_file(tmp_path, read):
    (tmp_path / "plain").write_text("x")
    path = tmp_path / "plain" / "study.toml"
    line = _message(read, path)
    assert line.startswith(f"{path}: cannot read the file: no such file"), line


def test_permission_denied(tmp_path, read, monkeypatch):
    """The tests may run as root (who reads anything), so open() is made to refuse."""
    path = tmp_path / "locked.toml"
    path.write_text("x = 1\n")

    def refuse(*args, **kwargs):
        raise PermissionError(13, "Permission denied", str(path))

    monkeypatch.setattr(reading, "open", refuse, raising=False)
    line = _message(read, path)
    assert line == f"{path}: cannot read the file: permission denied", line


@pytest.mark.parametrize("data", [
    'title = "\u00cele"\n'.encode("latin-1"),           # a Latin-1 letter
    b'title = "ok"\n# caf\xc3',                          # a sequence cut off by the end
    b"x" * (1 << 20) + b"\n\xe9\n",                     # past the first 1 MiB chunk
    b"x" * ((1 << 20) - 1) + "\u20ac".encode() + b"\xff",  # valid across the chunk edge
], ids=["latin-1", "cut-off", "past-first-chunk", "across-chunk-edge"])
def test_not_utf8_names_the_first_bad_byte(tmp_path, read, data):
    path = tmp_path / "study.toml"
    path.write_bytes(data)
    offset = _first_bad_offset(data)
    line = _message(read, path)
    expected = (f"{path}: the file is not UTF-8 text (byte 0x{data[offset]:02x} at offset "
                f"{offset}); save it as UTF-8")
    assert line == expected, f"{line!r} should be {expected!r}"


@pytest.mark.parametrize("mark", [codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE])
def test_utf16_file_is_named_as_such(tmp_path, read, mark):
    path = tmp_path / "study.toml"
    encoding = "utf-16-le" if mark == codecs.BOM_UTF16_LE else "utf-16-be"
    path.write_bytes(mark + 'title = "x"\n'.encode(encoding))
    line = _message(read, path)
    assert line == (f"{path}: the file is not UTF-8 text (it starts with a UTF-16 "
                    "byte-order mark); save it as UTF-8"), line


def test_utf8_byte_order_mark_is_dropped(tmp_path, read):
    """A UTF-8 BOM (as some editors write) is not part of the text (codecs 'utf-8-sig')."""
    path = tmp_path / "study.toml"
    path.write_bytes(codecs.BOM_UTF8 + "title = \"Île\"\r\n".encode())
    assert read(path) == "title = \"Île\"\r\n", "the BOM must be dropped, the rest kept as is"


def test_invalid_toml_wording():
    import tomllib

    with pytest.raises(tomllib.TOMLDecodeError) as caught:
        tomllib.loads("x = \n")
    error = reading.invalid_toml(caught.value, source="s.toml")
    line = str(error)
    assert line.startswith("s.toml: invalid TOML: invalid value"), line
    assert "line 1" in line and "\n" not in line, line


# --- the three file readers use the one wording ---------------------------------------

READERS = {"study": load_study, "claim": load_claim, "loci": read_loci}


@pytest.mark.parametrize("kind", READERS)
def test_every_reader_has_the_same_wording(tmp_path, kind):
    missing = tmp_path / "absent.txt"
    assert _message(READERS[kind], missing) == f"{missing}: cannot read the file: no such file"
    assert _message(READERS[kind], tmp_path) == (
        f"{tmp_path}: cannot read the file: it is a folder")
    bad = tmp_path / "bad.txt"
    bad.write_bytes(b"title = \"x\"\n\xe9\n")
    assert _message(READERS[kind], bad) == (
        f"{bad}: the file is not UTF-8 text (byte 0xe9 at offset 12); save it as UTF-8")


def test_loci_with_a_byte_order_mark_reads(tmp_path):
    path = tmp_path / "loci.csv"
    path.write_bytes(codecs.BOM_UTF8 + LOCI.encode())
    table = read_loci(path)
    assert table.names == ["GENE1", "GENE2"], f"BOM must not reach the header: {table.names}"


# --- the command line: exit 2, one line naming the file, nothing written ---------------

def _cases(tmp_path):
    latin = tmp_path / "latin.bin"
    latin.write_bytes("caf\u00e9\n".encode("latin-1"))
    utf16 = tmp_path / "utf16.bin"
    utf16.write_bytes(codecs.BOM_UTF16_LE + "x\n".encode("utf-16-le"))
    folder = tmp_path / "folder.bin"
    folder.mkdir()
    return {"missing": (tmp_path / "absent.bin", "cannot read the file: no such file"),
            "folder": (folder, "cannot read the file: it is a folder"),
            "latin-1": (latin, "not UTF-8 text (byte 0xe9 at offset 3)"),
            "utf-16": (utf16, "UTF-16 byte-order mark")}


@pytest.mark.parametrize("case", ["missing", "folder", "latin-1", "utf-16"])
@pytest.mark.parametrize("command", ["estimate", "check", "batch"])
def test_command_line_one_line_naming_the_file(tmp_path, capsys, command, case):
    path, needle = _cases(tmp_path)[case]
    out = tmp_path / "out"
    argv = {"estimate": ["estimate", path, "--out", out],
            "check": ["check", path, "--out", out],
            "batch": ["batch", path, "--out", out]}[command]
    before = sorted(p.name for p in tmp_path.iterdir())
    status, stdout, stderr = call_qhat(argv, capsys)
    lines = stderr.strip().splitlines()
    assert status == 2, f"qhat {command} on a {case} file exited {status}: {stderr}"
    assert len(lines) == 1 and lines[0].startswith(f"qhat: error: {path}: "), (
        f"want one line naming {path}: {stderr!r}")
    assert needle in lines[0], f"{lines[0]!r} should say {needle!r}"
    assert stdout == "", f"nothing belongs on stdout: {stdout!r}"
    assert sorted(p.name for p in tmp_path.iterdir()) == before, "something was written"


def test_demo_files_still_read():
    """The shipped scenarios decode and parse (smoke check of the shared reader)."""
    assert load_study(DEMO / "island-dominant.toml").title, "demo study lost its title"
    assert load_claim(DEMO / "claim-northholm-indirect.toml").values, "demo claim empty"
    assert read_loci(DEMO / "batch_loci.csv").names, "demo loci file has no loci"


# --- the loci file read block by block (qhat batch streams it) -------------------------

def _loci_file(tmp_path, rows):
    path = tmp_path / "loci.csv"
    path.write_text("locus,observed,sampled,mu\n" + "".join(f"{r}\n" for r in rows))
    return path


def test_a_repeated_header_column_is_refused_by_name(tmp_path):
    """A repeated column would be read from one copy and silently drop the other."""
    path = tmp_path / "loci.csv"
    path.write_text("locus,Observed,sampled,mu, observed ,mu\nA,1,100,1e-6,5,2e-6\n")
    line = _message(read_loci, path)
    assert line == (f"{path}: line 1: the header repeats the columns 'observed', 'mu' (each "
                    "column may appear once)"), f"want the file and both columns named: {line}"


def test_a_name_repeated_blocks_apart_names_its_first_line(tmp_path):
    """Source: the file itself: GENE2 is on line 3 and again on line 9 (blocks of 2 rows)."""
    rows = [f"GENE{i},1,1000,1e-6" for i in range(1, 8)] + ["GENE2,1,1000,1e-6"]
    path = _loci_file(tmp_path, rows)
    with pytest.raises(InputError) as caught:
        scan_loci(path, {}, block_rows=2)
    assert str(caught.value) == f"{path}: line 9, column locus: 'GENE2' repeats line 3", (
        f"want the repeat on line 9 and the first on line 3: {caught.value}")
    kept = {}
    scan = scan_loci(path, kept, skip_bad_rows=True, block_rows=2)
    names = [n for i in range(scan.blocks) for n in kept[i].names]
    assert names == [f"GENE{i}" for i in range(1, 8)] and scan.count == 7, (
        f"the repeated row must be the one left out: {names}")
    assert [s["line"] for s in scan.skipped] == [9], f"skipped {scan.skipped}"


def test_hash_collisions_never_reject_a_row(tmp_path, monkeypatch):
    """Every name given the same hash: the exact confirmation must keep all distinct rows."""
    monkeypatch.setattr(loci._SeenNames, "_hashes",
                        staticmethod(lambda names: np.zeros(len(names), dtype=np.int64)))
    path = _loci_file(tmp_path, [f"G{i},1,1000,1e-6" for i in range(10)])
    kept = {}
    scan = scan_loci(path, kept, block_rows=3)
    assert scan.count == 10 and scan.blocks == 4, f"{scan.count} rows in {scan.blocks} blocks"


def test_blocks_hold_the_rows_read_loci_returns(tmp_path):
    """Blocks of 3 rows laid end to end are the whole table, line numbers included."""
    rows = [f"G{i},{i % 5},1000,{(i + 1) * 1e-7:g}" for i in range(11)]
    rows.insert(4, "G99,x,1000,1e-6")
    path = _loci_file(tmp_path, rows)
    whole = read_loci(path, skip_bad_rows=True)
    kept = {}
    scan = scan_loci(path, kept, skip_bad_rows=True, block_rows=3)
    blocks = [kept[i] for i in range(scan.blocks)]
    assert [n for b in blocks for n in b.names] == whole.names, "names differ"
    np.testing.assert_array_equal(np.concatenate([b.lines for b in blocks]), whole.lines)
    np.testing.assert_array_equal(np.concatenate([b.observed for b in blocks]), whole.observed)
    assert scan.max_observed == 4 and scan.skipped == whole.skipped, (
        f"max observed {scan.max_observed}, skipped {scan.skipped}")
