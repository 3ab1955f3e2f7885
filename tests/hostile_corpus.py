"""A corpus of hostile catalogue files, generated into a folder (nothing large is committed).

Each ``Case`` names a file, writes its bytes and says what the server must answer: ``refused``
(a 4xx at upload, its one-line detail naming where and what to do), ``failed`` (accepted, then
the ingest fails with a one-line reason and leaves no catalogue) or ``ready`` (ingested, with the
planted rows reported by the named rules). Run ``python tests/hostile_corpus.py DIR`` to write
the files for a look by hand.
"""

from __future__ import annotations

import gzip
import io
import json
import sys
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Literal

import polars as pl
import zstandard

HEADER = ["id", "name", "type", "parent", "mass [kg]", "radius [m]", "a [au]", "eccentricity"]
# Clean bodies: a Sun-like star (IAU 2015 B3 nominal solar mass and radius), an Earth-like and a
# Jupiter-like planet and a Ganymede-sized moon (JPL SSD values, rounded); no rule of
# severity `error` fires on them.
CLEAN: list[list[str]] = [
    ["S1", "Lanthe", "G2V", "", "1.989e30", "6.957e8", "", ""],
    ["P1", "Orrin", "Rocky world", "S1", "5.97e24", "6.371e6", "1.0", "0.02"],
    ["G1", "Velm", "Gas giant", "S1", "1.898e27", "6.99e7", "5.2", "0.05"],
    ["M1", "Tessa", "Icy moon", "G1", "1.48e23", "2.634e6", "0.00716", "0.001"],
]
Outcome = Literal["refused", "failed", "ready"]
LONG_LINE_BYTES = 10 * 2**20
WIDE_COLUMNS = 10_000
BOMB_MEMBER_BYTES = 16 * 2**20  # one gzip member of the bomb; repeated BOMB_MEMBERS times
BOMB_MEMBERS = 64  # 1 GiB of output from about 1 MB of upload


@dataclass(frozen=True)
class Case:
    """One hostile file and the answer it must get."""

    id: str
    filename: str
    content: Callable[[], bytes]
    outcome: Outcome
    status: int | None = None  # the HTTP status of a refusal
    says: tuple[str, ...] = ()  # fragments the detail (or the failure) must contain
    rules: dict[str, set[str]] = field(default_factory=dict)  # body -> rules that must fire
    large: bool = False  # generated once per session


def csv_bytes(rows: list[list[str]], header: list[str] = HEADER, sep: str = ",",
              newline: str = "\n") -> bytes:
    """Rows as delimited UTF-8 text (no quoting: cells are written verbatim)."""
    return newline.join(sep.join(r) for r in [header, *rows]).encode() + newline.encode()


def _with(*rows: list[str]) -> Callable[[], bytes]:
    """The clean bodies plus ``rows``, as CSV."""
    return lambda: csv_bytes([*CLEAN, *rows])


def _planet(body: str, **cells: str) -> list[str]:
    """An Earth-like planet of S1 with some cells replaced (keys: HEADER names, no units)."""
    row = dict(zip(["id", "name", "type", "parent", "mass", "radius", "a", "e"],
                   [body, body.title(), "Rocky world", "S1", "5.97e24", "6.371e6", "1.0", "0.02"],
                   strict=True))
    row.update(cells)
    return list(row.values())


def _ndjson(records: list[dict | str]) -> bytes:
    """NDJSON lines; a str record is written verbatim (a broken line)."""
    return "\n".join(r if isinstance(r, str) else json.dumps(r) for r in records).encode() + b"\n"


def _records() -> list[dict]:
    """The clean bodies as NDJSON records with SI unit hints in their keys."""
    return [dict(zip(HEADER, r, strict=True)) for r in CLEAN]


def _parquet(frame: pl.DataFrame) -> bytes:
    """``frame`` as Parquet bytes."""
    out = io.BytesIO()
    frame.write_parquet(out)
    return out.getvalue()


def _parquet_wrong_types() -> bytes:
    """mass as text (one of it not a number), radius as a nested list of floats."""
    return _parquet(pl.DataFrame({
        "id": ["S1", "P1", "P2"], "type": ["G2V", "Rocky world", "Rocky world"],
        "parent": [None, "S1", "S1"], "mass [kg]": ["1.989e30", "5.97e24", "heavy"],
        "radius [m]": [[6.957e8], [6.371e6, 1.0], [6.371e6]],
    }))


def _gz_bomb() -> bytes:
    """Many identical gzip members: a small file that decompresses to ``BOMB_MEMBERS`` x 16 MiB."""
    member = gzip.compress(b"\n" * BOMB_MEMBER_BYTES, compresslevel=9)  # blank lines
    return gzip.compress(csv_bytes(CLEAN)) + member * BOMB_MEMBERS


def _long_line() -> bytes:
    """One 10 MB line with no newline: a header that never ends."""
    return b"id," + b"x" * (LONG_LINE_BYTES - 3)


def _long_data_line() -> bytes:
    """A normal header, then a 10 MB data row."""
    return csv_bytes(CLEAN) + b"P9,Far,Rocky world,S1,1e24," + b"9" * LONG_LINE_BYTES + b"\n"


def _wide() -> bytes:
    """10,000 columns."""
    header = ["id", *(f"c{i}" for i in range(1, WIDE_COLUMNS))]
    return csv_bytes([["A", *("1" for _ in range(1, WIDE_COLUMNS))]], header)


def _latin1() -> bytes:
    """A name written in Latin-1 (é as the single byte 0xE9) on data line 3."""
    rows = [r[:] for r in CLEAN]
    rows[1][1] = "Orr\xe9n"
    return csv_bytes(rows).decode().encode("latin-1")


def _bad_utf8() -> bytes:
    """Bytes that are no UTF-8 sequence at all (0xFF 0xFE) in a name on line 2."""
    return csv_bytes(CLEAN).replace(b"Lanthe", b"Lan\xff\xfethe")


def _mixed_units() -> bytes:
    """A radius column with units written into some cells ("12 km", "3 au")."""
    return csv_bytes([*CLEAN, _planet("U1", radius="6371 km"), _planet("U2", radius="3 au")])


def _truncated_gz() -> bytes:
    return gzip.compress(csv_bytes(CLEAN * 50))[:60]


def _truncated_zstd() -> bytes:
    return zstandard.ZstdCompressor().compress(csv_bytes(CLEAN * 50))[:60]


def _cycle() -> bytes:
    """A orbits B orbits A, and a body that orbits itself."""
    return csv_bytes([*CLEAN, _planet("A1", parent="B1"), _planet("B1", parent="A1"),
                      _planet("SELF", parent="SELF")])


def _refused(cid: str, name: str, content: Callable[[], bytes], status: int,
             *says: str, large: bool = False) -> Case:
    return Case(cid, name, content, "refused", status, says, large=large)


def _ready(cid: str, name: str, content: Callable[[], bytes], large: bool = False,
           **rules: set[str]) -> Case:
    return Case(cid, name, content, "ready", rules=rules, large=large)


def refused_cases() -> list[Case]:
    """Files that cannot be read at all: a 4xx at upload saying where and what to do."""
    return [
        _refused("empty", "empty.csv", lambda: b"", 422, "empty"),
        _refused("only-whitespace", "blank.csv", lambda: b"  \n\t\n\r\n   ", 422, "empty"),
        _refused("only-bom", "bom_only.csv", lambda: b"\xef\xbb\xbf", 422, "empty"),
        _refused("header-only", "header.csv", lambda: csv_bytes([]), 422, "no data rows"),
        _refused("no-header", "noheader.csv", lambda: csv_bytes(CLEAN[1:], CLEAN[0]), 422,
                 "line 1", "header"),
        _refused("wrong-delimiter", "pipes.csv", lambda: csv_bytes(CLEAN, sep="|"), 422,
                 "line 1", "'|'"),
        _refused("ragged-long", "ragged.csv", _with(["X1", "A", "B", "C", "1", "2", "3", "4", "5"]),
                 422, "line 6", "9 fields", "header has 8"),
        _refused("unterminated-quote", "quote.csv", _with(['X1', '"Open', 'Rocky world', 'S1',
                                                           '1', '1', '1', '0']),
                 422, "line 6", "quote"),
        _refused("latin-1", "latin1.csv", _latin1, 422, "line 3", "column 2", "UTF-8"),
        _refused("invalid-utf8", "badbytes.csv", _bad_utf8, 422, "line 2", "column 2", "UTF-8"),
        _refused("nul-bytes", "nul.csv", lambda: csv_bytes(CLEAN).replace(b"Orrin", b"Or\0rin"),
                 422, "line 3", "NUL"),
        _refused("utf-16", "utf16.csv", lambda: csv_bytes(CLEAN).decode().encode("utf-16"), 422,
                 "UTF-16"),
        _refused("xlsx-renamed", "sheet.csv", lambda: b"PK\x03\x04\x14\x00\x06\x00" + b"\0" * 64,
                 422, "binary"),
        _refused("xlsx", "sheet.xlsx", lambda: b"PK\x03\x04", 415, ".csv"),
        _refused("json-array", "array.ndjson", lambda: json.dumps(_records()).encode(), 422,
                 "JSON array"),
        _refused("ndjson-broken-line", "broken.ndjson", lambda: _ndjson(
            [*_records()[:2], '{"id": "X1", "mass [kg]": ', *_records()[2:]]), 422,
                 "line 3", "invalid JSON"),
        _refused("ndjson-not-object", "scalar.ndjson", lambda: _ndjson(
            [*_records(), "[1, 2]"]), 422, "line 5", "object"),
        _refused("truncated-gz", "cut.csv.gz", _truncated_gz, 422, "corrupt"),
        _refused("truncated-parquet", "cut.parquet",
                 lambda: _parquet(pl.DataFrame({"id": ["A"] * 1000}))[:300], 422, "Parquet"),
        _refused("long-line", "oneline.csv", _long_line, 422, "line 1", "longer than",
                 large=True),
        _refused("gz-not-gzip", "plain.csv.gz", lambda: csv_bytes(CLEAN), 422, "gzip",
                 "corrupt"),
        _refused("truncated-zstd", "cut.csv.zst", _truncated_zstd, 422, "zstd", "truncated"),
        _refused("empty-header", "nohead.csv", lambda: csv_bytes(CLEAN, [""] * 8), 422,
                 "header"),
        _refused("10000-columns", "wide.csv", _wide, 413, "10,000 columns", "limit",
                 large=True),
    ]


def ready_cases() -> list[Case]:
    """Files that ingest; the planted rows become findings of the named rules."""
    return [
        _ready("ragged-short", "short.csv", _with(["X1", "A", "Rocky world"]),
               X1={"missing-value"}),
        _ready("long-data-line", "longrow.csv", _long_data_line, large=True, P9={"bad-cell"}),
        _ready("zstd", "packed.csv.zst", lambda: zstandard.ZstdCompressor().compress(
            csv_bytes([*CLEAN, _planet("Z1", e="-0.5")])), Z1={"bad-eccentricity"}),
        _ready("bom", "bom.csv", lambda: b"\xef\xbb\xbf" + csv_bytes(CLEAN)),
        _ready("crlf", "crlf.csv", lambda: csv_bytes(CLEAN, newline="\r\n")),
        _ready("thousands-separators", "thousands.csv",
               _with(_planet("T1", mass='"5,970,000,000,000,000,000,000,000"')),
               T1={"bad-cell"}),
        _ready("decimal-commas", "decimal.csv", lambda: csv_bytes(
            [*CLEAN, _planet("D1", radius="6371000,5", e="0,02")], sep=";"),
               D1={"bad-cell"}),
        _ready("non-finite", "nonfinite.csv", _with(
            _planet("BIG", mass="1e309"), _planet("NAN", radius="nan"),
            _planet("INF", mass="inf"), _planet("NINF", radius="-inf"),
            _planet("MZERO", mass="-0")),
               BIG={"bad-cell"}, NAN={"bad-cell"}, INF={"bad-cell"}, NINF={"bad-cell"},
               MZERO={"non-positive"}),
        _ready("non-positive", "sizes.csv", _with(
            _planet("NEG", mass="-5.97e24"), _planet("ZERO", radius="0"),
            _planet("NEGR", radius="-1")),
               NEG={"non-positive"}, ZERO={"non-positive"}, NEGR={"non-positive"}),
        # e >= 1 is an unbound orbit (a note), a negative e broken data (an error)
        _ready("eccentricity", "ecc.csv", _with(
            _planet("E1", e="1"), _planet("E2", e="1.7"), _planet("E3", e="-0.1")),
               E3={"bad-eccentricity"}),
        # a repeated column name is read under a new name (after the value before it), not refused
        _ready("duplicate-header", "dupcols.csv", lambda: csv_bytes(
            CLEAN, [*HEADER[:-1], "mass [kg]"])),
        _ready("duplicate-ids", "dups.csv", _with(_planet("P1")), P1={"duplicate-id"}),
        _ready("missing-parent", "orphan.csv", _with(_planet("O1", parent="NOWHERE")),
               O1={"orphan-parent"}),
        _ready("parent-cycle", "cycle.csv", _cycle, A1={"parent-cycle"}, B1={"parent-cycle"},
               SELF={"parent-cycle"}),
        _ready("moon-heavier", "heavy.csv", _with(
            ["H1", "Brute", "Rocky world", "P1", "6e25", "1.7e7", "0.00716", "0.001"]),
               H1={"heavier-than-parent"}),
        _ready("mixed-units-text", "units.csv", _mixed_units, U1={"bad-cell"}, U2={"bad-cell"}),
        _ready("mixed-units-scale", "kmslip.csv", _with(_planet("K1", radius="6371")),
               K1={"unit-slip"}),
        _ready("missing-id", "noid_row.csv", _with(_planet("", name="Anon")),
               **{"row 5": {"missing-value"}}),
        _ready("parquet-wrong-types", "types.parquet", _parquet_wrong_types,
               P1={"bad-cell"}, P2={"bad-cell"}, S1={"bad-cell"}),
        _ready("path-traversal-name", "../../x.csv", lambda: csv_bytes(CLEAN)),
        _ready("long-name", "n" * 300 + ".csv", lambda: csv_bytes(CLEAN)),
        _ready("control-chars-name", "a\x00b\r\nc\t.csv", lambda: csv_bytes(CLEAN)),
    ]


def failed_cases() -> list[Case]:
    """Files that look fine at first and fail in the ingest, cleanly."""
    return [
        Case("gzip-bomb", "bomb.csv.gz", _gz_bomb, "failed",
             says=("bomb.csv.gz", "decompresses to more than", "limit"), large=True),
    ]


def all_cases() -> list[Case]:
    """Every case of the corpus."""
    return [*refused_cases(), *ready_cases(), *failed_cases()]


def write_corpus(folder: Path, cases: list[Case] | None = None) -> dict[str, Path]:
    """Write each case's file under ``folder`` (named by case id) and return id -> path."""
    folder.mkdir(parents=True, exist_ok=True)
    out = {}
    for case in cases or all_cases():
        path = folder / f"{case.id}.bin"
        path.write_bytes(case.content())
        out[case.id] = path
    return out


if __name__ == "__main__":
    written = write_corpus(Path(sys.argv[1]))
    print(f"{len(written)} files in {sys.argv[1]}")
