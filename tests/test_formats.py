"""Tests for bodycensus.input.formats: the registry of input formats and its readers.

Every record is checked the same way (suffixes, recognition, a 3-row file scanned and headed to
the same strings), and a record added in a test shows up in the sniff, the upload box, the
catalogues page and the command line without any other edit.
"""

from __future__ import annotations

import gzip
import json
from collections.abc import Callable, Iterator
from pathlib import Path

import polars as pl
import pytest
from astropy.table import Table
from polars.testing import assert_frame_equal
from web_support import api_settings, asgi_client, assert_error, upload, wait_done

from bodycensus.cli.main import main
from bodycensus.dashboard.app import create_app
from bodycensus.input import formats
from bodycensus.input.formats import (
    FALLBACK,
    FORMATS,
    ROW_INDEX,
    DelimitedText,
    InputFormat,
    accepted,
    by_content,
    by_suffix,
    catalogue_suffix,
    detect_format,
    suffix_hint,
)
from bodycensus.input.ingest import IngestError, ingest
from bodycensus.input.readers import COMPRESSIONS, to_string
from bodycensus.input.sniff import sniff
from bodycensus.science.units import AU, M_SUN

COLUMNS = ["id", "name", "mass_kg"]
ROWS = [["b1", "Aster", "1.5e24"], ["b2", "Brindle, the second", "2"], ["b3", "", "3e30"]]
EXPECTED = pl.DataFrame({"id": ["b1", "b2", "b3"], "name": ["Aster", "Brindle, the second", None],
                         "mass_kg": ["1.5e24", "2", "3e30"]})


def _delimited(sep: str) -> Callable[[Path], None]:
    """A writer of the three rows as text split by ``sep`` (the cell with a comma quoted)."""
    def write(path: Path) -> None:
        lines = [COLUMNS, *ROWS]
        path.write_text("".join(sep.join(f'"{c}"' if "," in c else c for c in line) + "\n"
                                for line in lines))
    return write


def _ndjson(path: Path) -> None:
    path.write_text("".join(json.dumps({k: v for k, v in zip(COLUMNS, r, strict=True) if v})
                            + "\n" for r in ROWS))


def _parquet(path: Path) -> None:
    pl.DataFrame([dict(zip(COLUMNS, r, strict=True)) for r in ROWS]).with_columns(
        pl.col("name").replace("", None)).write_parquet(path)


def _astropy(fmt: str) -> Callable[[Path], None]:
    """A writer of the three rows as an astropy table (VOTable or FITS), mass with its unit."""
    def write(path: Path) -> None:
        table = Table([[r[i] for r in ROWS] for i in range(3)], names=COLUMNS)
        table["mass_kg"].unit = "kg"
        table.write(path, format=fmt)
    return write


# How each registered record's 3-row file is written; a new record needs a writer here.
WRITERS: dict[str, Callable[[Path], None]] = {
    "delimited": _delimited(","), "tsv": _delimited("\t"), "ndjson": _ndjson,
    "parquet": _parquet, "votable": _astropy("votable"), "fits": _astropy("fits"),
}


def _three_rows(tmp_path: Path, fmt: InputFormat) -> Path:
    path = tmp_path / f"three{fmt.suffixes[0]}"
    WRITERS[fmt.name](path)
    return path


def test_names_and_suffixes_are_unique_lower_case_and_not_compressions() -> None:
    suffixes = [s for fmt in FORMATS for s in fmt.suffixes]
    packed = [s for comp in COMPRESSIONS for s in comp.suffixes]
    assert len(set(suffixes)) == len(suffixes) and not set(suffixes) & set(packed)
    assert len({fmt.name for fmt in FORMATS}) == len(FORMATS)
    assert all(s.startswith(".") and s == s.lower() for s in suffixes)
    assert FALLBACK in FORMATS


def test_every_record_has_a_writer_in_this_test() -> None:
    assert set(WRITERS) == {fmt.name for fmt in FORMATS}


@pytest.mark.parametrize("fmt", FORMATS, ids=[f.name for f in FORMATS])
def test_recognised_by_each_suffix_in_any_case_and_under_any_compression(fmt: InputFormat
                                                                          ) -> None:
    def never() -> bytes:
        raise AssertionError("the first bytes were read although the suffix says it all")

    for suffix in fmt.suffixes:
        for packed in ("", *(s for comp in COMPRESSIONS for s in comp.suffixes)):
            name = f"Cat.Alogue{suffix}{packed}".upper()
            assert by_suffix(name) is fmt
            assert detect_format(name, never) is fmt
            assert catalogue_suffix(name) == suffix + packed


@pytest.mark.parametrize(("start", "name"), [
    (b"PAR1\x15\x04\x15\x80", "parquet"),
    (b"SIMPLE  ", "fits"),
    (b'{"id": 1', "ndjson"),
    (b'\xef\xbb\xbf \r\n{"id"', "ndjson"),  # a BOM and blank lines before the first object
    (b"id\tmass\n", "delimited"),  # a tab alone does not make TSV: only its suffix does
    (b"id,mass\n", "delimited"),
    (b"", "delimited"),
])
def test_recognised_by_the_first_bytes_when_the_name_says_nothing(start: bytes, name: str
                                                                 ) -> None:
    assert by_content(start).name == name
    assert detect_format("catalogue.dat", lambda: start).name == name


def test_unsupported_names_have_no_suffix() -> None:
    for name in ("sheet.xlsx", "x.gz", "x.csv.bz2", "csv", "x.csv.gz.txt.zip"):
        assert catalogue_suffix(name) is None, name
    assert catalogue_suffix("a.b.TAB.ZSTD") == ".tab.zstd"


@pytest.mark.parametrize("fmt", FORMATS, ids=[f.name for f in FORMATS])
def test_each_format_scans_three_rows_to_the_same_strings(tmp_path: Path, fmt: InputFormat
                                                          ) -> None:
    path = _three_rows(tmp_path, fmt)
    frame = fmt.reader.scan(path, fmt.reader.prepare(path, path.name))
    schema = frame.collect_schema()
    assert schema.names()[0] == ROW_INDEX  # the row index comes first, then the file's columns
    text = frame.select(pl.col(ROW_INDEX), *(to_string(pl.col(c), t).alias(c)
                                             for c, t in schema.items() if c != ROW_INDEX))
    table = text.collect().with_columns(pl.col("name").replace("", None))
    assert table[ROW_INDEX].to_list() == [1, 2, 3]
    assert_frame_equal(table.drop(ROW_INDEX), EXPECTED, check_column_order=True)


@pytest.mark.parametrize("fmt", FORMATS, ids=[f.name for f in FORMATS])
def test_each_format_heads_three_rows_to_the_same_text(tmp_path: Path, fmt: InputFormat) -> None:
    path = _three_rows(tmp_path, fmt)
    head = fmt.reader.head(path, None, path.name, 2)
    assert head is not None and head.columns == COLUMNS
    assert [[r.get(c, "") for c in COLUMNS] for r in head.rows] == ROWS[:2]


@pytest.mark.parametrize("fmt", FORMATS, ids=[f.name for f in FORMATS])
def test_each_format_heads_through_gzip_or_says_it_cannot(tmp_path: Path, fmt: InputFormat
                                                          ) -> None:
    plain = _three_rows(tmp_path, fmt)
    packed = plain.with_name(plain.name + ".gz")
    packed.write_bytes(gzip.compress(plain.read_bytes()))
    head = fmt.reader.head(packed, "gzip", packed.name, 10)
    if fmt.reader.kind in ("parquet", "table"):  # read whole: the ingest decompresses it
        assert head is None
    else:
        assert head is not None and len(head.rows) == 3 and head.columns == COLUMNS


@pytest.mark.parametrize(("name", "text", "says"), [
    ("open.csv", 'id,name\nb1,x\nb2,"never closed\nb3,y\n', "line 3: "),
    ("wide.tsv", "id\tname\nb1\tx\nb2\ty\tz\n", "line 3: 3 fields but the header has 2"),
    ("broken.ndjson", '{"id": "b1"}\n{"id": \n', "line 2: invalid JSON"),
])
def test_a_fault_is_located_by_the_format_reader(tmp_path: Path, name: str, text: str,
                                                 says: str) -> None:
    path = tmp_path / name
    path.write_text(text)
    fmt = by_suffix(name)
    assert fmt is not None
    fault = fmt.reader.fault(path, fmt.reader.prepare(path, name))
    assert fault is not None and fault.startswith(says) and "; " in fault and "\n" not in fault


def test_parquet_leaves_its_faults_to_polars(tmp_path: Path) -> None:
    parquet = by_suffix("x.parquet")
    assert parquet is not None and parquet.reader.kind == "parquet"
    path = _three_rows(tmp_path, parquet)
    assert parquet.reader.fault(path, parquet.reader.prepare(path, path.name)) is None


# --- TSV: its own record, tab fixed -----------------------------------------------------------


def test_tsv_reads_tabs_only_and_says_so_when_the_file_has_commas(tmp_path: Path) -> None:
    tsv = by_suffix("x.tab")
    assert tsv is not None and tsv.name == "tsv" and tsv.reader == DelimitedText("\t")
    ok = tmp_path / "tabs.tab"
    ok.write_text("id\tnote\nb1\tcommas, kept\n")
    report = ingest(ok, tmp_path / "t.parquet")
    assert (report.format, report.delimiter) == ("delimited", "\t")
    assert pl.read_parquet(tmp_path / "t.parquet")["note"].to_list() == ["commas, kept"]
    commas = tmp_path / "commas.tsv"
    commas.write_text("id,mass_kg\nb1,1\n")
    with pytest.raises(IngestError) as caught:
        ingest(commas, tmp_path / "u.parquet")
    assert str(caught.value) == ("commas.tsv: line 1 is one column split by commas, not tabs; "
                                 "separate the columns by tabs or give the file a .csv name")
    with pytest.raises(IngestError, match="split by commas, not tabs"):
        sniff(commas, "commas.tsv", 100)


def test_the_words_for_people_come_from_the_registry() -> None:
    assert accepted() == ("CSV/semicolon text, TSV, NDJSON, Parquet, VOTable or FITS table, "
                          "optionally .gz or .zst")
    assert suffix_hint() == (".csv, .tsv, .ndjson, .parquet, .vot or .fits (optionally .gz or "
                             ".zst)")


# --- a new record, registered in one place, reaches every consumer ----------------------------

PIPES = InputFormat("psv", "pipe delimited text", (".psv",), DelimitedText(delimiter="|"))
PIPED = "id|name|mass (earth_mass)|radius_km\nb1|Aster|1|6371\nb2|Brindle|0.8|6000\n"


@pytest.fixture()
def with_pipes(monkeypatch: pytest.MonkeyPatch) -> Iterator[InputFormat]:
    """The registry with one more record, as if it had been added to FORMATS."""
    monkeypatch.setattr(formats, "FORMATS", (*formats.FORMATS, PIPES))
    yield PIPES


def test_a_new_record_is_sniffed_and_ingested(tmp_path: Path, with_pipes: InputFormat) -> None:
    path = tmp_path / "bodies.psv.gz"
    path.write_bytes(gzip.compress(PIPED.encode()))
    look = sniff(path, path.name, 100)
    assert look is not None and look.columns == ["id", "name", "mass (earth_mass)", "radius_km"]
    report = ingest(path, tmp_path / "t.parquet")
    assert (report.format, report.delimiter, report.rows) == ("delimited", "|", 2)


def test_a_new_record_is_accepted_by_the_upload_box(tmp_path: Path,
                                                    with_pipes: InputFormat) -> None:
    with asgi_client(create_app(api_settings(tmp_path))) as client:
        refused = upload(client, "bodies.xlsx", b"id\n")
        assert ".psv" in assert_error(refused, 415, "bad_input")["detail"]
        done = wait_done(client, upload(client, "bodies.psv", PIPED.encode()).json()["id"])
        assert done["status"] == "ready" and done["rows"] == 2, done
        assert "pipe delimited text" in client.get("/").text


def test_a_new_record_is_named_in_the_command_line_and_checked(
        tmp_path: Path, with_pipes: InputFormat, capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit):
        main(["check", "--help"])
    assert "pipe delimited text" in " ".join(capsys.readouterr().out.split())
    path = tmp_path / "bodies.psv"
    path.write_text(PIPED)
    assert main(["check", str(path), "--format", "json", "--quiet"]) == 0
    assert json.loads(capsys.readouterr().out)["summary"]["rows"] == 2


# --- VOTable and FITS: units from the file's own metadata ---------------------------------------


@pytest.mark.parametrize("suffix", [".vot", ".fits"])
def test_archive_tables_give_their_units_to_the_mapping(tmp_path: Path, suffix: str) -> None:
    # An archive's table (as the NASA Exoplanet Archive serves): units in the metadata, none in
    # the names; astropy's solMass and AU are read as ours (IAU 2015 B3, IAU 2012 B2).
    table = Table({"pl_name": ["b1", "b2"], "pl_bmassj": [1.0, 2.0], "pl_orbsmax": [1.0, 0.05]})
    table["pl_bmassj"].unit, table["pl_orbsmax"].unit = "solMass", "AU"
    source = tmp_path / f"archive{suffix}"
    table.write(source, format="votable" if suffix == ".vot" else "fits")
    report = ingest(source, tmp_path / "t.parquet", map_overrides={
        "id": "pl_name", "mass": "pl_bmassj", "semi_major_axis": "pl_orbsmax"})
    out = pl.read_parquet(tmp_path / "t.parquet")
    assert out["mass"].to_list() == pytest.approx([M_SUN, 2 * M_SUN])
    assert out["semi_major_axis"].to_list() == pytest.approx([AU, 0.05 * AU])
    assert any(n.startswith("mass from 'pl_bmassj' in solar_mass (the file's metadata: ")
               for n in report.notes)
