"""Tests for bodycensus.input.sniff: the upload's first look (columns, samples, the guessed
mapping, label -> family guesses, why the person should confirm) and what it refuses.

The API's mapping step and the hostile corpus (test_api.py, test_hostile_input.py) drive the same
function through the server; these call it directly on files written by the test.
"""

from __future__ import annotations

import gzip
import io
from pathlib import Path

import polars as pl
import pytest

from bodycensus.errors import BadInput, TooLarge
from bodycensus.input.ingest import IngestError
from bodycensus.input.sniff import HEAD_ROWS, SAMPLE_ROWS, SAMPLES_PER_COLUMN, sniff

HEADER = "id,type,mass (earth_mass),radius,colour\n"


def _write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_bytes(gzip.compress(text.encode()) if name.endswith(".gz") else text.encode())
    return path


def test_columns_samples_mapping_families_and_reasons(tmp_path: Path) -> None:
    rows = "".join(f"b{i},{'gas giant' if i % 2 else 'Rocky world'},{i},{i},\n"
                   for i in range(1, 31))
    look = sniff(_write(tmp_path, "c.csv.gz", HEADER + rows), "c.csv.gz", 100)
    assert look is not None
    assert look.columns == ["id", "type", "mass (earth_mass)", "radius", "colour"]
    assert look.samples["id"] == [f"b{i}" for i in range(1, SAMPLES_PER_COLUMN + 1)]
    assert look.samples["type"] == ["gas giant", "Rocky world"]  # distinct values only
    assert look.samples["colour"] == []
    assert look.mapping.choices["mass"].unit == "earth_mass"
    assert look.families == {"Rocky world": "rock", "gas giant": "gas_giant"}
    assert look.reasons == ["the unit of 'radius' (radius) is not in its header; m assumed"]
    assert set(look.to_json()) == {"columns", "samples", "mapping", "families", "reasons"}


def test_samples_come_from_the_first_rows_only(tmp_path: Path) -> None:
    rows = "".join(f"b{i},star,1,1,{'late' if i > SAMPLE_ROWS else ''}\n" for i in range(1, 40))
    look = sniff(_write(tmp_path, "c.csv", HEADER + rows), "c.csv", 100)
    assert look is not None and look.samples["colour"] == []


def test_no_id_column_is_the_first_reason(tmp_path: Path) -> None:
    look = sniff(_write(tmp_path, "k.tsv", "key\tmass_kg\nb1\t1\n"), "k.tsv", 100)
    assert look is not None and look.reasons == ["no column was recognised as the body id; "
                                                 "choose it, or number the rows"]


def test_ndjson_and_parquet_are_looked_into(tmp_path: Path) -> None:
    look = sniff(_write(tmp_path, "n.jsonl", '{"id": "b1", "mass_kg": 1}\n{"id": "b2"}\n'),
                 "n.jsonl", 100)
    assert look is not None and look.columns == ["id", "mass_kg"]
    assert look.samples["mass_kg"] == ["1"]
    table = tmp_path / "p.parquet"
    pl.DataFrame({"id": ["b1"], "tags": [[1, 2]], "mass": [1.0]}).write_parquet(table)
    look = sniff(table, "p.parquet", 100)
    assert look is not None and look.samples == {"id": ["b1"], "tags": ["[1, 2]"],
                                                 "mass": ["1.0"]}


def test_a_compressed_parquet_file_is_left_to_the_ingest(tmp_path: Path) -> None:
    packed = io.BytesIO()
    pl.DataFrame({"id": ["b1"]}).write_parquet(packed)
    path = tmp_path / "p.parquet.gz"
    path.write_bytes(gzip.compress(packed.getvalue()))
    assert sniff(path, "p.parquet.gz", 100) is None


def test_only_the_rows_it_samples_are_checked(tmp_path: Path) -> None:
    rows = [f"b{i},star,1,1,\n" for i in range(1, HEAD_ROWS + 10)]
    rows[HEAD_ROWS + 2] = "b0,star,1,1,,,\n"  # past the rows it reads: left to the ingest
    assert sniff(_write(tmp_path, "q.csv", HEADER + "".join(rows)), "q.csv", 100) is not None
    rows[5] = "b0,star,1,1,,,\n"
    with pytest.raises(IngestError, match="q.csv: line 7: 7 fields but the header has 5"):
        sniff(_write(tmp_path, "q.csv", HEADER + "".join(rows)), "q.csv", 100)


@pytest.mark.parametrize(("name", "text", "error", "says"), [
    ("e.csv", "\n \n", BadInput, "e.csv: the file is empty; export the catalogue again"),
    ("h.csv", ",,\n1,2,3\n", BadInput, "h.csv: no header row found"),
    ("r.csv", HEADER, BadInput, "r.csv: no data rows after the header; add at least one body"),
    ("w.csv", "a," + HEADER + "x,b1,star,1,1,\n", TooLarge,
     "w.csv: 6 columns, more than the limit of 5"),
    ("d.csv", "1,2,3\n4,5,6\n", IngestError, "d.csv: line 1 looks like data"),
])
def test_what_it_refuses_in_one_line(tmp_path: Path, name: str, text: str,
                                     error: type[Exception], says: str) -> None:
    with pytest.raises(error) as caught:
        sniff(_write(tmp_path, name, text), name, 5)
    assert str(caught.value).startswith(says) and "\n" not in str(caught.value)
