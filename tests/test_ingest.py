"""Tests for bodycensus.input.ingest: every format and compression, SI conversion, bad cells,
errors.

Every fixture file is a few rows written into tmp_path by the test itself.
"""

from __future__ import annotations

import gzip
import json
from pathlib import Path

import polars as pl
import pytest
import zstandard
from astropy import constants as const
from astropy import units as u
from polars.testing import assert_frame_equal

from bodycensus.input import ingest as ingest_module
from bodycensus.input.formats import DelimitedText, Layout, NdjsonText, ParquetFile
from bodycensus.input.ingest import IngestError, IngestLimits, IngestReport, ingest
from bodycensus.input.schema import guess_mapping

HEADER = ["ID", "Name", "type", "parent", "Mass (M_earth)", "radius_km", "a (AU)", "e",
          "period_days", "locked", "colour"]
ROWS = [
    ["s1", "Aster", "star", "", "332946", "695700", "", "", "", "", "pale"],
    ["p1", " Brindle ", "rocky", "s1", "1.0", "6371.0", "1.0", "0.0167", "365.25", "no", ""],
    ["p2", "Corvel", "gas giant", "s1", "abc", "inf", "5.2", "0.05", "4332", "maybe", "banded"],
]
EXPECTED_SCHEMA = pl.Schema({
    "id": pl.String, "name": pl.String, "label": pl.String, "family": pl.String,
    "parent": pl.String, "system": pl.String, "mass": pl.Float64, "radius": pl.Float64,
    "semi_major_axis": pl.Float64, "eccentricity": pl.Float64, "period": pl.Float64,
    "rotation_period": pl.Float64, "tidally_locked": pl.Boolean, "age": pl.Float64,
    "temperature": pl.Float64, "luminosity": pl.Float64, "inclination": pl.Float64,
    "retrograde": pl.Boolean, "ring_inner": pl.Float64, "ring_outer": pl.Float64,
    "ring_mass": pl.Float64, "ring_density": pl.Float64,
    # measurement uncertainties (issue 12)
    "mass_error": pl.Float64, "mass_error_low": pl.Float64, "radius_error": pl.Float64,
    "radius_error_low": pl.Float64, "semi_major_axis_error": pl.Float64,
    "semi_major_axis_error_low": pl.Float64, "period_error": pl.Float64,
    "period_error_low": pl.Float64,
    "_row": pl.Int64, "_bad": pl.String, "_planet_radii": pl.String, "_a_printed": pl.Float64,
    "colour": pl.String,
})
# Reference conversions from astropy (IAU 2015 B3 nominal Earth mass; IAU 2012 B2 au; days).
M_E = const.M_earth.to_value(u.kg)
AU = u.au.to(u.m)
DAY = u.day.to(u.s)


def _write_text(path: Path, text: str) -> Path:
    """Write ``text`` to ``path``, gzip- or zstd-compressed by its extension."""
    data = text.encode()
    if path.suffix == ".gz":
        data = gzip.compress(data)
    elif path.suffix == ".zst":
        data = zstandard.ZstdCompressor().compress(data)
    path.write_bytes(data)
    return path


def _catalogue(tmp_path: Path, fmt: str, compression: str) -> Path:
    """The three-body catalogue above as a file of format ``fmt``, compressed or not."""
    ext = {"csv": ".csv", "tsv": ".tsv", "semicolon": ".csv", "ndjson": ".ndjson",
           "parquet": ".parquet"}[fmt] + compression
    path = tmp_path / f"catalogue{ext}"
    if fmt == "parquet":
        frame = pl.DataFrame([{k: v or None for k, v in zip(HEADER, row, strict=True)}
                              for row in ROWS])
        frame.write_parquet(path.with_suffix("") if compression else path)
        plain = path.with_suffix("") if compression else path
        if compression:
            _write_bytes_compressed(plain.read_bytes(), path)
        return path
    if fmt == "ndjson":
        records = [{k: v for k, v in zip(HEADER, row, strict=True) if v} for row in ROWS]
        return _write_text(path, "".join(json.dumps(r) + "\n" for r in records))
    sep = {"csv": ",", "tsv": "\t", "semicolon": ";"}[fmt]
    lines = [sep.join(HEADER)] + [sep.join(row) for row in ROWS]
    return _write_text(path, "\n".join(lines) + "\n")


def _write_bytes_compressed(data: bytes, path: Path) -> None:
    """Compress bytes into ``path`` by its extension."""
    if path.suffix == ".gz":
        path.write_bytes(gzip.compress(data))
    else:
        path.write_bytes(zstandard.ZstdCompressor().compress(data))


def _error(tmp_path: Path, name: str, text: str | bytes, **kwargs: object) -> str:
    """Ingest a file holding ``text``; return the IngestError message (asserting one line)."""
    path = tmp_path / name
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        _write_text(path, text)
    with pytest.raises(IngestError) as caught:
        ingest(path, tmp_path / "out" / "table.parquet", **kwargs)
    message = str(caught.value)
    assert "\n" not in message and message.startswith(name)
    out = tmp_path / "out"
    assert not out.exists() or list(out.iterdir()) == []  # no table, no temp files
    return message


@pytest.mark.parametrize("compression", ["", ".gz", ".zst"])
@pytest.mark.parametrize("fmt", ["csv", "tsv", "semicolon", "ndjson", "parquet"])
def test_every_format_and_compression_gives_the_same_table(
        tmp_path: Path, fmt: str, compression: str) -> None:
    source = _catalogue(tmp_path, fmt, compression)
    dest = tmp_path / "out" / "table.parquet"
    stages: list[tuple[str, int]] = []
    report = ingest(source, dest, progress=lambda stage, n: stages.append((stage, n)))
    table = pl.read_parquet(dest)
    assert table.schema == EXPECTED_SCHEMA
    assert report.rows == 3 and report.format == ("delimited" if fmt in (
        "csv", "tsv", "semicolon") else fmt)
    assert report.compression == {"": None, ".gz": "gzip", ".zst": "zstd"}[compression]
    assert report.delimiter == {"csv": ",", "tsv": "\t", "semicolon": ";"}.get(fmt)
    assert report.columns == HEADER or fmt == "ndjson"  # NDJSON: keys in order of appearance
    assert report.unknown_columns == ["colour"]
    assert report.bad_cells == {"Mass (M_earth)": 1, "radius_km": 1, "locked": 1}
    assert stages[-1] == ("write", 3) and ("read", 0) in stages
    assert any(s == "decompress" for s, _ in stages) == bool(compression)
    assert list(dest.parent.iterdir()) == [dest]  # no temp or decompressed file left behind
    _assert_catalogue_values(table)


def _assert_floats(column: pl.Series, expected: list[float | None], rel: float = 1e-6) -> None:
    """Nulls exactly where `expected` has None; the other values equal within `rel`."""
    actual = column.to_list()
    assert [value is None for value in actual] == [value is None for value in expected]
    assert [value for value in actual if value is not None] == pytest.approx(
        [value for value in expected if value is not None], rel=rel)


def _assert_catalogue_values(table: pl.DataFrame) -> None:
    """The three bodies in SI, with the unreadable cells null and named in _bad."""
    assert table["id"].to_list() == ["s1", "p1", "p2"]
    assert table["name"].to_list() == ["Aster", "Brindle", "Corvel"]  # whitespace stripped
    assert table["label"].to_list() == ["star", "rocky", "gas giant"]
    assert table["parent"].to_list() == [None, "s1", "s1"]  # empty cell: null, not bad
    _assert_floats(table["mass"], [332946 * M_E, M_E, None], rel=1e-12)
    _assert_floats(table["radius"], [6.957e8, 6.371e6, None], rel=1e-12)
    _assert_floats(table["semi_major_axis"], [None, AU, 5.2 * AU], rel=1e-12)
    _assert_floats(table["eccentricity"], [None, 0.0167, 0.05])
    _assert_floats(table["period"], [None, 365.25 * DAY, 4332 * DAY])
    assert table["tidally_locked"].to_list() == [None, False, None]
    assert table["_row"].to_list() == [1, 2, 3]
    assert table["_bad"].to_list() == [None, None, "mass,radius,tidally_locked"]
    assert table["colour"].to_list() == ["pale", None, "banded"]
    for field in ("family", "system", "rotation_period", "age", "temperature", "luminosity"):
        assert table[field].null_count() == 3


def test_report_to_json_round_trips_through_json(tmp_path: Path) -> None:
    report = ingest(_catalogue(tmp_path, "csv", ""), tmp_path / "t.parquet")
    assert isinstance(report, IngestReport)
    data = json.loads(json.dumps(report.to_json()))
    assert data["rows"] == 3 and data["bad_cells"]["radius_km"] == 1
    assert data["mapping"]["choices"]["semi_major_axis"]["unit"] == "au"


@pytest.mark.parametrize(("name", "content", "fmt", "delimiter"), [
    ("bodies.dat", "id\tmass_kg\nx\t1\n", "delimited", "\t"),
    ("bodies.dat", "id;mass_kg\nx;1\n", "delimited", ";"),
    ("bodies", '{"id": "x", "mass_kg": 1}\n', "ndjson", None),
])
def test_format_and_delimiter_are_sniffed_without_an_extension(
        tmp_path: Path, name: str, content: str, fmt: str, delimiter: str | None) -> None:
    path = _write_text(tmp_path / name, content)
    report = ingest(path, tmp_path / "t.parquet")
    assert (report.format, report.delimiter) == (fmt, delimiter)
    assert pl.read_parquet(tmp_path / "t.parquet")["mass"].to_list() == [1.0]


def test_parquet_and_gzip_are_sniffed_by_their_magic_bytes(tmp_path: Path) -> None:
    pl.DataFrame({"id": ["x"], "mass_kg": [2.0]}).write_parquet(tmp_path / "plain")
    (tmp_path / "packed").write_bytes(gzip.compress((tmp_path / "plain").read_bytes()))
    report = ingest(tmp_path / "packed", tmp_path / "t.parquet")
    assert (report.format, report.compression) == ("parquet", "gzip")
    assert pl.read_parquet(tmp_path / "t.parquet")["mass"].to_list() == [2.0]


def test_native_parquet_types_are_converted(tmp_path: Path) -> None:
    source = tmp_path / "typed.parquet"
    pl.DataFrame({
        "id": [1, 2, 3], "radius_km": [1.0, float("nan"), None], "locked": [True, None, False],
        "e": [0, 1, 2], "tags": [[1, 2], [], None],
    }).write_parquet(source)
    ingest(source, tmp_path / "t.parquet")
    table = pl.read_parquet(tmp_path / "t.parquet")
    assert table["id"].to_list() == ["1", "2", "3"]
    assert table["radius"].to_list()[::2] == [1000.0, None]
    assert table["_bad"].to_list() == [None, "radius", None]  # NaN is non-finite: bad
    assert table["tidally_locked"].to_list() == [True, None, False]
    assert table["eccentricity"].to_list() == [0.0, 1.0, 2.0]
    assert table["tags"].to_list() == ["[1, 2]", "[]", None]


def test_tidal_lock_words(tmp_path: Path) -> None:
    words = ["true", "FALSE", "Yes", "no", "1", "0", "y", "N", " ", "locked"]
    text = "id,tidal_lock\n" + "".join(f"b{i},{w}\n" for i, w in enumerate(words))
    ingest(_write_text(tmp_path / "t.csv", text), tmp_path / "t.parquet")
    table = pl.read_parquet(tmp_path / "t.parquet")
    assert table["tidally_locked"].to_list() == [True, False, True, False, True, False, True,
                                                 False, None, None]
    assert table["_bad"].to_list() == [None] * 9 + ["tidally_locked"]


def test_orbit_sense_words_and_inclination_in_degrees(tmp_path: Path) -> None:
    # Retrograde beyond 90 degrees of inclination; the angle is kept in radians (astropy).
    words = ["retrograde", "Prograde", "direct", "true", "", "sideways"]
    text = "id,orbit_sense,i (deg)\n" + "".join(f"b{i},{w},{30 * i}\n"
                                                for i, w in enumerate(words))
    report = ingest(_write_text(tmp_path / "s.csv", text), tmp_path / "s.parquet")
    table = pl.read_parquet(tmp_path / "s.parquet")
    assert table["retrograde"].to_list() == [True, False, False, True, None, None]
    assert table["_bad"].to_list() == [None] * 5 + ["retrograde"]
    assert table["inclination"].to_list() == pytest.approx(
        [(30 * i * u.deg).to_value(u.rad) for i in range(6)], rel=1e-12)
    assert report.mapping.choices["inclination"].unit == "deg"


def test_ring_edges_in_planet_radii_are_kept_and_named(tmp_path: Path) -> None:
    text = "id,ring_inner_km,ring outer [R_planet]\nG,74491,2.35\n"
    ingest(_write_text(tmp_path / "r.csv", text), tmp_path / "r.parquet")
    row = pl.read_parquet(tmp_path / "r.parquet").row(0, named=True)
    assert (row["ring_inner"], row["ring_outer"]) == (pytest.approx(74_491e3), 2.35)
    assert row["_planet_radii"] == "ring_outer"


def test_nan_inf_and_garbage_are_bad_but_numbers_in_any_notation_are_not(tmp_path: Path) -> None:
    cells = ["nan", "inf", "-Infinity", "\"1,5\"", "12 kg", " 3 ", "1e3", "-2.5E+2", ""]
    text = "id,mass\n" + "".join(f"b{i},{c}\n" for i, c in enumerate(cells))
    report = ingest(_write_text(tmp_path / "m.csv", text), tmp_path / "t.parquet")
    table = pl.read_parquet(tmp_path / "t.parquet")
    assert table["mass"].to_list() == [None] * 5 + [3.0, 1000.0, -250.0, None]
    assert table["_bad"].to_list() == ["mass"] * 5 + [None] * 4
    assert report.bad_cells == {"mass": 5}


def test_a_huge_value_that_overflows_in_si_is_bad(tmp_path: Path) -> None:
    text = "id,mass (M_sun)\nb1,1e300\nb2,1\n"
    report = ingest(_write_text(tmp_path / "m.csv", text), tmp_path / "t.parquet")
    assert report.bad_cells == {"mass (M_sun)": 1}


def test_overrides_pick_columns_and_units(tmp_path: Path) -> None:
    text = "key,size,dist\nb1,2,3\n"
    report = ingest(_write_text(tmp_path / "o.csv", text), tmp_path / "t.parquet",
                    map_overrides={"id": "key", "radius": "size", "semi_major_axis": "dist"},
                    unit_overrides={"radius": "R_jup", "semi_major_axis": "km"})
    table = pl.read_parquet(tmp_path / "t.parquet")
    # astropy R_jup is the IAU 2015 B3 nominal equatorial radius, as ours.
    assert table["radius"][0] == pytest.approx(2 * const.R_jup.to_value(u.m), rel=1e-12)
    assert table["semi_major_axis"][0] == pytest.approx(3000.0)
    assert report.mapping.choices["radius"].unit_source == "override"
    assert report.unknown_columns == []


def test_unknown_columns_kept_and_colliding_names_prefixed(tmp_path: Path) -> None:
    text = "id,radius_km,radius,_row,notes\nb1,1,999,7, kept as is \n"
    report = ingest(_write_text(tmp_path / "c.csv", text), tmp_path / "t.parquet")
    table = pl.read_parquet(tmp_path / "t.parquet")
    assert report.unknown_columns == ["radius", "_row", "notes"]
    assert report.mapping.conflicts == {"radius": ["radius"]}
    assert table.columns[-3:] == ["orig_radius", "orig__row", "notes"]
    assert (table["radius"][0], table["orig_radius"][0]) == (1000.0, "999")
    assert (table["_row"][0], table["orig__row"][0]) == (1, "7")
    assert table["notes"][0] == " kept as is "


def test_utf8_bom_and_crlf_are_read(tmp_path: Path) -> None:
    path = tmp_path / "bom.csv"
    path.write_bytes("\ufeffid,mass_kg\r\nb1,5\r\n".encode())
    ingest(path, tmp_path / "t.parquet")
    assert_frame_equal(pl.read_parquet(tmp_path / "t.parquet").select("id", "mass"),
                       pl.DataFrame({"id": ["b1"], "mass": [5.0]}))


def test_a_multi_frame_zstd_file_is_read_whole(tmp_path: Path) -> None:
    compressor = zstandard.ZstdCompressor()
    path = tmp_path / "two.csv.zst"
    path.write_bytes(compressor.compress(b"id,mass\nb1,1\n") + compressor.compress(b"b2,2\n"))
    assert ingest(path, tmp_path / "t.parquet").rows == 2


# --- files that cannot be read at all: one line, where, and what to do --------------------------


def test_empty_file(tmp_path: Path) -> None:
    assert "the file is empty" in _error(tmp_path, "empty.csv", "")


def test_header_only(tmp_path: Path) -> None:
    assert "no data rows" in _error(tmp_path, "header.csv", "id,mass\n")


def test_ragged_row_names_its_line(tmp_path: Path) -> None:
    message = _error(tmp_path, "ragged.csv", "id,mass\nb1,1\nb2,2\nb3,3,4\nb4,5\n")
    assert "line 4: 3 fields but the header has 2" in message


def test_unterminated_quote_names_its_line_and_column(tmp_path: Path) -> None:
    message = _error(tmp_path, "quote.csv", 'id,mass,name\nb1,1,x\nb2,2,"Dun\nb3,3,y\n')
    assert "line 3" in message and "column 'name'" in message and "quote" in message


def test_broken_ndjson_line_is_named(tmp_path: Path) -> None:
    text = '{"id": "b1", "mass": 1}\n{"id": "b2", "mass": }\n{"id": "b3"}\n'
    assert "line 2: invalid JSON" in _error(tmp_path, "broken.ndjson", text)


def test_ndjson_line_that_is_not_an_object(tmp_path: Path) -> None:
    text = '{"id": "b1", "mass": 1}\n[1, 2]\n'
    assert "line 2: not a JSON object" in _error(tmp_path, "list.jsonl", text)


def test_truncated_gzip(tmp_path: Path) -> None:
    data = gzip.compress(b"id,mass\n" + b"b1,1\n" * 10_000)
    message = _error(tmp_path, "cut.csv.gz", data[: len(data) // 2])
    assert "gzip data is corrupt or truncated" in message


def test_gz_name_on_a_file_that_is_not_gzip(tmp_path: Path) -> None:
    assert "gzip data is corrupt" in _error(tmp_path, "fake.csv.gz", b"id,mass\nb1,1\n")


def test_truncated_zstd(tmp_path: Path) -> None:
    data = zstandard.ZstdCompressor().compress(b"id,mass\n" + b"b1,1\n" * 10_000)
    assert "zstd data is corrupt or truncated" in _error(tmp_path, "cut.csv.zst", data[:-8])


def test_decompression_limit(tmp_path: Path) -> None:
    data = gzip.compress(b"id,mass\n" + b"b1,1\n" * 10_000)
    message = _error(tmp_path, "big.csv.gz", data, limits=IngestLimits(max_decompressed_bytes=1000))
    assert "more than 1,000 bytes" in message


def test_parquet_that_is_not_parquet(tmp_path: Path) -> None:
    assert "not a valid Parquet file" in _error(tmp_path, "x.parquet", "id,mass\nb1,1\n")


def test_truncated_parquet(tmp_path: Path) -> None:
    pl.DataFrame({"id": ["b1"] * 100, "mass": [1.0] * 100}).write_parquet(tmp_path / "whole")
    data = (tmp_path / "whole").read_bytes()
    assert "truncated" in _error(tmp_path, "cut.parquet", data[:-20])


def test_mapped_column_missing_lists_the_columns(tmp_path: Path) -> None:
    message = _error(tmp_path, "m.csv", "id,mass\nb1,1\n", map_overrides={"radius": "size"})
    assert "no column 'size'" in message and "'id', 'mass'" in message


def test_unknown_unit_override_is_an_ingest_error(tmp_path: Path) -> None:
    message = _error(tmp_path, "u.csv", "id,mass\nb1,1\n", unit_overrides={"mass": "stone"})
    assert "unknown unit 'stone'" in message


def test_no_id_column(tmp_path: Path) -> None:
    message = _error(tmp_path, "noid.csv", "key,mass\nb1,1\n")
    assert "no id column among 'key', 'mass'; use --map id=COLUMN" in message


def test_missing_file(tmp_path: Path) -> None:
    with pytest.raises(IngestError, match="no such file"):
        ingest(tmp_path / "absent.csv", tmp_path / "t.parquet")


def test_failed_ingest_keeps_the_previous_table(tmp_path: Path) -> None:
    dest = tmp_path / "t.parquet"
    ingest(_write_text(tmp_path / "good.csv", "id,mass\nb1,1\n"), dest)
    with pytest.raises(IngestError):
        ingest(_write_text(tmp_path / "bad.csv", "id,mass\nb1,1,2\n"), dest)
    assert pl.read_parquet(dest)["id"].to_list() == ["b1"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.csv", "good.csv", "t.parquet"]


@pytest.mark.parametrize("fmt", ["csv", "ndjson", "parquet"])
def test_the_normalising_plan_runs_fully_on_the_streaming_engine(tmp_path: Path, fmt: str) -> None:
    # Bounded memory on huge files needs every node streaming: polars marks an in-memory
    # fallback (e.g. replace_strict in polars 2.1) with this fill colour in its physical graph.
    source = _catalogue(tmp_path, fmt, "")
    reader = {"csv": DelimitedText(), "ndjson": NdjsonText(), "parquet": ParquetFile()}[fmt]
    frame = reader.scan(source, Layout(",") if fmt == "csv" else Layout())
    schema = pl.Schema({n: t for n, t in frame.collect_schema().items()
                        if n != ingest_module._ROW})
    plan = ingest_module._normalise(frame, schema, guess_mapping(schema.names()))
    graph = plan.show_graph(engine="streaming", plan_stage="physical", raw_output=True)
    assert "multi-scan" in graph and "in-memory engine fallback" in graph  # the legend
    assert 'fillcolor="0.0 0.3 1.0"' not in graph


@pytest.mark.parametrize(("name", "content"), [
    ("noise.csv", bytes(range(256)) * 8),
    ("wide.txt", "id,mass\nb1,1\n".encode("utf-16")),
    ("array.json", b'[{"id": "b1", "mass": 1}]'),
])
def test_binary_utf16_and_json_arrays_are_refused_in_one_line(
        tmp_path: Path, name: str, content: bytes) -> None:
    assert "binary data, UTF-16 text or a JSON array" in _error(tmp_path, name, content)


def test_a_long_header_is_listed_shortly_in_errors(tmp_path: Path) -> None:
    header = ",".join(f"col{i}" for i in range(30)) + ",x" + "y" * 200
    message = _error(tmp_path, "wide.csv", header + "\n" + ",".join("1" * 31) + "\n")
    assert "'col19' and 11 more; use --map id=COLUMN" in message and "yyyy" not in message
