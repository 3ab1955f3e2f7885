"""Tests for bodycensus.input.readers: the compression registry and its streams, and the checks
that word a fault in one line with its line and column.

Each file is a few bytes written by the test itself, except the gzip bomb of the hostile corpus.
"""

from __future__ import annotations

import codecs
import gzip
import re
from pathlib import Path

import polars as pl
import pytest
import zstandard
from hostile_corpus import all_cases

from bodycensus.input.readers import (
    COMPRESSIONS,
    Compression,
    IngestError,
    check_parquet,
    chunks,
    compression_hint,
    csv_fault,
    decompress,
    delimiter_fault,
    detect_compression,
    encoding_fault,
    head,
    head_lines,
    header_fault,
    inner_suffix,
    join_or,
    ndjson_fault,
    sniff_delimiter,
    to_string,
    unique_columns,
)

MIB = 2**20
TEXT = b"id,mass\n" + b"b1,1\n" * 1000
PACK = {"gzip": gzip.compress, "zstd": zstandard.ZstdCompressor().compress}


# --- compression ------------------------------------------------------------------------------


def test_every_compression_has_a_packer_here_and_unique_suffixes_and_magic() -> None:
    assert set(PACK) == {comp.name for comp in COMPRESSIONS}
    suffixes = [s for comp in COMPRESSIONS for s in comp.suffixes]
    assert len(set(suffixes)) == len(suffixes)
    assert len({comp.magic for comp in COMPRESSIONS}) == len(COMPRESSIONS)
    assert compression_hint() == ".gz or .zst"


@pytest.mark.parametrize("comp", COMPRESSIONS, ids=[c.name for c in COMPRESSIONS])
def test_found_by_suffix_then_by_magic_and_read_whole(tmp_path: Path, comp: Compression
                                                      ) -> None:
    for suffix in comp.suffixes:
        named = tmp_path / f"x.csv{suffix.upper()}"
        named.write_bytes(PACK[comp.name](TEXT))
        assert detect_compression(named) == comp.name
        assert b"".join(chunks(named, comp.name)) == TEXT
    unnamed = tmp_path / "packed"
    unnamed.write_bytes(PACK[comp.name](TEXT))
    assert detect_compression(unnamed) == comp.name


def test_a_plain_file_has_no_compression(tmp_path: Path) -> None:
    path = tmp_path / "plain.dat"
    path.write_bytes(TEXT)
    assert detect_compression(path) is None and b"".join(chunks(path, None)) == TEXT


def test_several_gzip_members_and_zstd_frames_are_read_in_turn(tmp_path: Path) -> None:
    for name, pack in PACK.items():
        path = tmp_path / f"two.{name}"
        path.write_bytes(pack(b"id\n") + pack(b"b1\n"))
        assert b"".join(chunks(path, name)) == b"id\nb1\n"


def test_head_says_whether_it_is_the_whole_content(tmp_path: Path) -> None:
    path = tmp_path / "x.csv.gz"
    path.write_bytes(gzip.compress(TEXT))
    assert head(path, "gzip", 10, path.name) == (TEXT[:10], False)
    assert head(path, "gzip", len(TEXT), path.name) == (TEXT, True)


@pytest.mark.parametrize("name", ["gzip", "zstd"])
def test_truncated_data_is_one_line_naming_the_output_so_far(tmp_path: Path, name: str) -> None:
    path = tmp_path / "cut.csv"
    path.write_bytes(PACK[name](TEXT * 20)[:-8])
    with pytest.raises(IngestError) as caught:
        head(path, name, 10 * MIB, "cut.csv")
    message = str(caught.value)
    assert message.startswith(f"cut.csv: {name} data is corrupt or truncated after ")
    assert message.endswith("; download or compress it again") and "\n" not in message


def test_decompression_stops_at_the_limit_and_writes_no_more(tmp_path: Path) -> None:
    bomb = tmp_path / "bomb.csv.gz"
    bomb.write_bytes(next(c for c in all_cases() if c.id == "gzip-bomb").content())
    assert bomb.stat().st_size < 2 * MIB  # 1 GiB inside
    seen: list[int] = []
    with pytest.raises(IngestError, match="decompresses to more than 8,388,608 bytes"):
        decompress(bomb, "gzip", tmp_path, 8 * MIB, bomb.name,
                   lambda stage, written: seen.append(written))
    assert max(seen) <= 8 * MIB  # never more than the limit on disk
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bomb.csv.gz"]  # temp file removed


def test_decompress_writes_the_content_to_a_temp_file(tmp_path: Path) -> None:
    source = tmp_path / "x.csv.zst"
    source.write_bytes(PACK["zstd"](TEXT))
    plain = decompress(source, "zstd", tmp_path, 10 * MIB, source.name, lambda s, n: None)
    assert plain.parent == tmp_path and plain.read_bytes() == TEXT


def test_inner_suffix_looks_under_any_compression_suffix() -> None:
    assert [inner_suffix(n) for n in ("a.CSV.GZ", "a.tsv.zstd", "a.parquet", "a.gz", "a")] == \
        [".csv", ".tsv", ".parquet", "", ""]


def test_join_or() -> None:
    assert [join_or(w) for w in ([], ["a"], ["a", "b"], ["a", "b", "c"])] == \
        ["", "a", "a or b", "a, b or c"]


# --- text and values --------------------------------------------------------------------------


def test_the_delimiter_is_the_commonest_outside_quotes() -> None:
    assert sniff_delimiter('id;"a,b,c";x') == ";"
    assert sniff_delimiter("id\tmass\tradius") == "\t"
    assert sniff_delimiter("id") == ","


def test_head_lines_drop_a_cut_last_line_and_the_bom() -> None:
    assert head_lines("\ufeffid\nb1\nb2".encode(), complete=False) == ["id\n", "b1\n"]
    assert head_lines(b"id\nb1\nb2", complete=True) == ["id\n", "b1\n", "b2"]


def test_to_string_writes_nested_values_verbatim() -> None:
    frame = pl.DataFrame({"s": [{"a": 1}], "l": [[1.5, 2.0]], "n": [3]})
    text = frame.select(to_string(pl.col(c), t).alias(c) for c, t in frame.schema.items())
    assert text.row(0) == ('{"a":1}', "[1.5, 2.0]", "3")


# --- faults -----------------------------------------------------------------------------------


@pytest.mark.parametrize(("data", "says"), [
    ("id,mass\n".encode("utf-16"), "line 1: UTF-16 text"),
    (b"PK\x03\x04rest", "line 1: a zip archive or spreadsheet"),
    (b"id,name\nb1,Or\0rin\n", "line 2, column 2: a NUL byte"),
    (b' \n[{"id": 1}]', "line 1: a JSON array"),
    ("id,name\nb1,x\nb2,Orr\xe9n\n".encode("latin-1"), "line 3, column 2: byte 0xE9 is not UTF-8"),
])
def test_encoding_faults_are_located(data: bytes, says: str) -> None:
    fault = encoding_fault(data, complete=True)
    assert fault is not None and fault.startswith(says) and "; " in fault


def test_a_character_cut_by_the_end_of_the_head_is_no_fault() -> None:
    cut = "id,name\nb1,Orré".encode()[:-1]  # the head ends inside the é
    assert encoding_fault(cut, complete=False) is None
    assert encoding_fault(cut, complete=True) is not None
    assert encoding_fault(codecs.BOM_UTF8 + b"id\n", complete=True) is None


@pytest.mark.parametrize(("columns", "line", "says"), [
    (["1.0", "2", "x"], "1.0,2,x", "line 1 looks like data (1.0, 2, x, ...), not a header"),
    (["id|mass"], "id|mass", "line 1 is one column split by '|'"),
    (["id  mass"], "id  mass", "line 1 is one column split by 'spaces'"),
    (['{"id": "b1"', '"m": 1}'], '{"id": "b1", "m": 1}', "line 1 is a JSON object, not a header"),
])
def test_header_faults(columns: list[str], line: str, says: str) -> None:
    fault = header_fault(columns, line)
    assert fault is not None and fault.startswith(says) and "; " in fault


def test_repeated_names_are_renamed_after_their_value() -> None:
    # TEPCat's header (Southworth 2011, MNRAS 417, 2166) repeats err/errup/errdn beside each value
    columns = ["System", "Teff", "err", "err", "M_A", "errup", "errdn", "R_A", "errup", "errdn"]
    renamed, said = unique_columns(columns)
    assert renamed == ["System", "Teff", "Teff_err", "Teff_err_2", "M_A", "M_A_errup",
                       "M_A_errdn", "R_A", "R_A_errup", "R_A_errdn"]
    assert said[0] == "column 3 'err' (repeated) read as 'Teff_err'" and len(said) == 6
    assert unique_columns(["id", "m", "id"]) == (
        ["id", "m", "m_id"], ["column 3 'id' (repeated) read as 'm_id'"])
    assert unique_columns(["id", "mass"]) == (["id", "mass"], [])


def test_a_good_header_has_no_fault() -> None:
    assert header_fault(["id", "mass [kg]", ""], "id,mass [kg],") is None


def test_a_fixed_delimiter_names_the_one_the_file_uses() -> None:
    assert delimiter_fault(["id;mass"], "id;mass", "\t") == (
        "line 1 is one column split by semicolons, not tabs; separate the columns by tabs or "
        "give the file a .csv name")
    assert delimiter_fault(["id", "mass"], "id\tmass", "\t") is None
    assert delimiter_fault(["id"], "id", "\t") is None


def test_csv_faults_name_the_line() -> None:
    assert csv_fault(["id,m\n", "b1,1\n", "b2,2,3\n"], ",") == (
        "line 3: 3 fields but the header has 2; quote fields that contain the delimiter, or fix "
        "that row")
    quote = csv_fault(["id,m\n", 'b1,"open\n', "b2,2\n"], ",")
    assert quote is not None and quote.startswith("line 2: ") and "quote" in quote
    assert csv_fault(["id,m\n", "b1\n"], ",") is None  # a short row is allowed
    assert csv_fault(["id,m\n", 'b1,"cut'], ",", complete=False) is None  # the head ends there


def test_ndjson_faults_name_the_line() -> None:
    assert ndjson_fault(['{"id": 1}\n', "\n", "[1]\n"]) == (
        "line 3: not a JSON object; each line must be one {...} record")
    broken = ndjson_fault(['{"id": 1}\n', '{"id": \n'])
    assert broken is not None and broken.startswith("line 2: invalid JSON (")


def test_parquet_without_its_magic_at_either_end(tmp_path: Path) -> None:
    path = tmp_path / "t.parquet"
    pl.DataFrame({"id": ["b1"] * 50}).write_parquet(path)
    check_parquet("t.parquet", path)  # whole: no fault
    whole = path.read_bytes()
    for cut, where in ((whole[:-10], "end (truncated?)"), (b"id\n" + whole, "start")):
        path.write_bytes(cut)
        with pytest.raises(IngestError, match=re.escape(f"no PAR1 marker at its {where})")):
            check_parquet("t.parquet", path)
