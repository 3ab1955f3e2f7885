"""Every hostile file of the corpus through the real API: a located 4xx, a clean failure or a
catalogue whose bad rows are findings; never a 500, never a half catalogue, nothing else touched.
Also each configurable limit (upload, decompressed size, rows, columns) and sanitised names."""

from __future__ import annotations

import gzip
import hashlib
import io
from collections.abc import Iterator
from pathlib import Path

import httpx
import polars as pl
import pytest
from hostile_corpus import CLEAN, Case, all_cases, csv_bytes, write_corpus
from web_support import (
    SyncClient,
    asgi_client,
    assert_error,
    data_entries,
    live_server,
    upload,
    wait_done,
    write_catalogue,
)

from bodycensus.dashboard.app import create_app
from bodycensus.dashboard.settings import Settings
from bodycensus.input.ingest import IngestError, IngestLimits, ingest

CASES = all_cases()
MIB = 2**20
SEVERE = ("error", "impossible", "unstable", "suspect")


def hostile_settings(data_dir: Path, **limits: int) -> Settings:
    """Room for the 10 MB line; a 32 MiB decompression limit so the bomb trips it quickly."""
    return Settings(data_dir=data_dir, **{"max_upload_bytes": 16 * MIB,
                                          "max_decompressed_bytes": 32 * MIB, "workers": 2,
                                          **limits})


@pytest.fixture(scope="session")
def corpus(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """The corpus, written once per session (the 10 MB and 10,000-column files included)."""
    return write_corpus(tmp_path_factory.mktemp("corpus"), CASES)


@pytest.fixture(scope="module")
def served(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[SyncClient, Path, str]]:
    """One app with one earlier catalogue and a saved view that every case must leave alone."""
    data_dir = tmp_path_factory.mktemp("data")
    source = write_catalogue(tmp_path_factory.mktemp("src") / "earlier.csv", n_planets=50)
    with asgi_client(create_app(hostile_settings(data_dir))) as client:
        cat_id = upload(client, "earlier.csv", source.read_bytes()).json()["id"]
        assert wait_done(client, cat_id)["status"] == "ready"
        client.post("/api/views", json={"catalogue": cat_id, "query": "severity=error",
                                        "title": "earlier"})
        yield client, data_dir, cat_id


def tree_hashes(folder: Path) -> dict[str, str]:
    """sha256 of every file under ``folder``, by relative path."""
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def _assert_refused(case: Case, response: httpx.Response) -> None:
    """A 4xx in the one error shape, its single line naming the file, where and what to do."""
    code = "too_large" if case.status == 413 else "bad_input"
    detail = assert_error(response, case.status or 0, code)["detail"]
    for fragment in case.says:
        assert fragment in detail, detail
    assert any(word in detail for word in ("; ", ": name it")), detail  # what to do


def _assert_failed(case: Case, client: SyncClient, data_dir: Path, cat_id: str) -> None:
    """Accepted, then failed in one line; only its manifest stays, and it can be deleted."""
    done = wait_done(client, cat_id)
    assert done["status"] == "failed" and "\n" not in done["error"], done
    for fragment in case.says:
        assert fragment in done["error"], done["error"]
    assert [p.name for p in (data_dir / "incoming" / cat_id).iterdir()] == ["manifest.json"]
    assert not (data_dir / "catalogues" / cat_id).exists()


def _assert_ready(case: Case, client: SyncClient, data_dir: Path, cat_id: str) -> None:
    """Ingested; every planted body has its rules, and no clean body has a serious finding."""
    done = wait_done(client, cat_id)
    assert done["status"] == "ready", done
    findings = pl.read_parquet(data_dir / "catalogues" / cat_id / "findings.parquet")
    fired: dict[str, set[str]] = {}
    for body, rule, severity in findings.select("body", "rule", "severity").iter_rows():
        if severity in SEVERE:
            fired.setdefault(body, set()).add(rule)
    for body, rules in case.rules.items():
        assert rules <= fired.get(body, set()), (body, fired.get(body))
    errors = set(findings.filter(pl.col("severity") == "error")["body"])
    assert errors <= set(case.rules), errors
    assert (data_dir / "incoming" / cat_id).exists() is False
    assert "\\" not in done["name"] and "/" not in done["name"] and len(done["name"]) <= 120


@pytest.mark.parametrize("case", CASES, ids=[c.id for c in CASES])
def test_hostile_file(case: Case, corpus: dict[str, Path],
                      served: tuple[SyncClient, Path, str]) -> None:
    client, data_dir, earlier = served
    kept, before = tree_hashes(data_dir / "catalogues" / earlier), data_entries(data_dir)
    response = upload(client, case.filename, corpus[case.id].read_bytes())
    assert response.status_code != 500, response.text
    if case.outcome == "refused":
        _assert_refused(case, response)
        assert data_entries(data_dir) == before
    else:
        assert response.status_code == 202, response.text
        cat_id = response.json()["id"]
        check = _assert_failed if case.outcome == "failed" else _assert_ready
        check(case, client, data_dir, cat_id)
        assert client.delete(f"/api/catalogues/{cat_id}").status_code == 204
        assert data_entries(data_dir) == before
    assert tree_hashes(data_dir / "catalogues" / earlier) == kept
    assert client.get("/api/catalogues/" + earlier + "/views").json()["items"]


def test_names_are_sanitised_and_never_paths(corpus: dict[str, Path],
                                             served: tuple[SyncClient, Path, str]) -> None:
    client, data_dir, _ = served
    names = {"../../x.csv": "x.csv", "..\\..\\evil.csv": "evil.csv",
             "/etc/passwd.csv": "passwd.csv", "n" * 300 + ".csv": None}
    for sent, shown in names.items():
        cat_id = upload(client, sent, corpus["crlf"].read_bytes()).json()["id"]
        done = wait_done(client, cat_id)
        assert done["name"] == (shown or done["name"]) and len(done["name"]) <= 120
        assert done["name"].endswith(".csv")
        files = {p.name for p in (data_dir / "catalogues" / cat_id).iterdir()}
        # the upload kept under our name (source.csv), never the sender's
        assert files == {"manifest.json", "aggregates.json", "bodies", "names.parquet",
                         "body_index.parquet", "findings.parquet", "artefacts.parquet",
                         "findings_by_body.parquet", "findings_by_system.parquet",
                         "bodies_by_row.parquet",
                         "coverage.parquet", "source.csv", "systems.parquet",
                         "system_index.parquet"}
        assert client.delete(f"/api/catalogues/{cat_id}").status_code == 204
    assert not (data_dir.parent / "x.csv").exists() and not (data_dir / "x.csv").exists()


def test_some_hostile_files_through_uvicorn(corpus: dict[str, Path], tmp_path: Path) -> None:
    """The same answers from a real server on 127.0.0.1."""
    picked = {c.id: c for c in CASES if c.id in (
        "unterminated-quote", "latin-1", "no-header", "gzip-bomb", "non-finite")}
    with live_server(create_app(hostile_settings(tmp_path))) as base, \
            httpx.Client(base_url=base, timeout=30) as client:
        for case in picked.values():
            before = data_entries(tmp_path)
            response = client.post("/api/catalogues", files={
                "file": (case.filename, corpus[case.id].read_bytes())})
            if case.outcome == "refused":
                _assert_refused(case, response)
                assert data_entries(tmp_path) == before
                continue
            done = wait_done(client, response.json()["id"])
            assert done["status"] == ("failed" if case.outcome == "failed" else "ready")


# --- limits ---------------------------------------------------------------------------------


def test_upload_limit(tmp_path: Path) -> None:
    with asgi_client(create_app(hostile_settings(tmp_path, max_upload_bytes=4096))) as client:
        small = upload(client, "ok.csv", csv_bytes(CLEAN))
        assert small.status_code == 202
        wait_done(client, small.json()["id"])
        before = data_entries(tmp_path)
        big = upload(client, "big.csv", csv_bytes(CLEAN * 40))
        assert "4,096 bytes" in assert_error(big, 413, "too_large")["detail"]
        assert data_entries(tmp_path) == before


def test_row_limit_is_enforced_in_the_ingest(tmp_path: Path) -> None:
    source = tmp_path / "rows.csv"
    source.write_bytes(csv_bytes(CLEAN))
    with pytest.raises(IngestError, match="more than 3 rows"):
        ingest(source, tmp_path / "out.parquet", limits=IngestLimits(max_rows=3))
    assert not list(tmp_path.glob("out*"))
    assert ingest(source, tmp_path / "out.parquet", limits=IngestLimits(max_rows=4)).rows == 4
    with asgi_client(create_app(hostile_settings(tmp_path / "d", max_rows=3))) as client:
        done = wait_done(client, upload(client, "rows.csv", source.read_bytes()).json()["id"])
        assert done["status"] == "failed" and "more than 3 rows" in done["error"]
        assert done["error"].startswith("rows.csv: ") and "max_rows" in done["error"]


def test_column_limit_at_upload_and_in_the_ingest(tmp_path: Path) -> None:
    table = pl.DataFrame([dict(zip(["id", "mass [kg]", "radius [m]", "a", "b", "c"], r[:6],
                                   strict=True)) for r in CLEAN])
    packed = io.BytesIO()
    table.write_parquet(packed)
    with asgi_client(create_app(hostile_settings(tmp_path, max_columns=5))) as client:
        wide = upload(client, "wide.csv", csv_bytes(CLEAN))
        assert "8 columns, more than the limit of 5" in assert_error(wide, 413,
                                                                     "too_large")["detail"]
        # a compressed Parquet file is not sniffed: the ingest itself must refuse it
        accepted = upload(client, "wide.parquet.gz", gzip.compress(packed.getvalue()))
        done = wait_done(client, accepted.json()["id"])
        assert done["status"] == "failed" and "6 columns, more than the limit of 5" in \
            done["error"]
