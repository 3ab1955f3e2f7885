"""The artefact detector in bounded memory gives exactly the answers of the detector it replaced.

The reference below is main 52004af's grouping, kept here only as the reference: the group
columns collected as strings, per-group row lists, each field read whole and gathered per scope,
its ``_runs``, ``_lattice_step`` and spike counts as they were, and main 2278b53's ``local_steps``
(whole arrays of every distinct value and count). The detector under test streams small integer
group codes and one field at a time (``science/artefacts.py``) and scans each group's sorted
values chunk by chunk (``science/artefact_runs.py``, here with chunks of a few values, so runs
and spacings straddle their edges). Compared on the shipped
sample's run and on synthetic groups with a planted cutoff, gap and spike (statistical methods of
the detector itself: see tests/test_artefacts.py and the module docstring).
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np
import polars as pl
import pytest
from polars.testing import assert_frame_equal

from bodycensus.engines.local import check_file
from bodycensus.science import artefact_columns, artefact_runs, artefacts
from bodycensus.science.artefact_columns import group_codes
from bodycensus.science.artefacts import (
    ARTEFACT_FIELDS,
    Artefact,
    ArtefactConfig,
    Detection,
    detect_artefacts,
)
from bodycensus.storage.runs import scan_bodies

DEFAULTS = ArtefactConfig()
SAMPLE = Path(__file__).resolve().parents[1] / "sample_data" / "varrow_shoals.csv"


def _old_runs(s: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """main 52004af's ``_runs``."""
    starts = np.r_[0, np.flatnonzero(s[1:] != s[:-1]) + 1]
    return s[starts], np.diff(np.r_[starts, len(s)])


def _old_lattice_step(distinct: np.ndarray) -> float:
    """main 52004af's ``_lattice_step``."""
    if len(distinct) < 2:
        return 0.0
    step = float(np.min(np.diff(distinct)))
    units = (distinct - distinct[0]) / step
    if units[-1] > 1e7:
        return 0.0
    return step if np.all(np.abs(units - np.round(units)) < 1e-3) else 0.0


def _old_neighbour_counts(counts: np.ndarray, hits: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """main 2278b53's ``_neighbour_counts``."""
    lo, hi = np.clip(hits - 1, 0, len(counts) - 1), np.clip(hits + 1, 0, len(counts) - 1)
    reference = (counts[lo] + counts[hi]).astype(float)
    expected = reference / 2
    for end, (c1, c2) in ((0, counts[1:3]), (len(counts) - 1, counts[-2:-4:-1])):
        expected[hits == end], reference[hits == end] = c1**2 / c2, c1 + c2
    return expected, reference


def _old_spikes(distinct: np.ndarray, counts: np.ndarray, unit: str, config: ArtefactConfig
                ) -> list[Detection]:
    """main 2278b53's ``_spikes``, on every distinct value and count."""
    hits = np.flatnonzero(counts > config.min_excess)
    if len(distinct) < 3 or not hits.size:
        return []
    expected, reference = _old_neighbour_counts(counts, hits)
    keep = (counts[hits] - expected >= config.min_excess) & (
        counts[hits] >= config.spike_ratio * expected)
    rows: list[Detection] = []
    total = int(counts.sum())
    for i, wanted, ref in zip(hits[keep], expected[keep], reference[keep], strict=True):
        value, seen = distinct[i], int(counts[i])
        end = " at an end of the range (a clamp?)" if i in (0, len(distinct) - 1) else ""
        text = (f"{seen} bodies ({seen / total:.1%}) hold exactly {value:.6g}{unit} where "
                f"neighbouring values predict {wanted:.1f}{end}")
        rows.append(artefacts._row("spike", value, value, value, seen, wanted, text,
                                   artefacts.conditional_p(seen, float(wanted), float(ref))))
    return rows


def _old_local_steps(distinct: np.ndarray, low: np.ndarray, high: np.ndarray,
                     fallback: float) -> np.ndarray:
    """main 2278b53's ``local_steps``, on every distinct value."""
    at = np.searchsorted(distinct, low)
    before = np.where(at >= 1, low - distinct[np.maximum(at - 1, 0)], np.inf)
    beyond = np.minimum(at + 2, len(distinct) - 1)
    after = np.where(at + 2 < len(distinct), distinct[beyond] - high, np.inf)
    step = np.minimum(before, after)
    with np.errstate(divide="ignore", invalid="ignore"):
        units = (high - low) / step
    whole = np.isfinite(units) & (units >= 1 - 1e-3) & (np.abs(units - np.round(units)) < 1e-3)
    return np.where(whole, np.maximum(step, fallback), fallback)


@pytest.fixture(autouse=True)
def _small_chunks(monkeypatch: pytest.MonkeyPatch) -> None:
    """Chunks of 7 values: runs, spacings and gathers straddle the chunk edges."""
    monkeypatch.setattr(artefact_runs, "CHUNK", 7)
    monkeypatch.setattr(artefact_columns, "ORDER_CHUNK", 7)


def _old_scan_cell(s: np.ndarray, unit: str, config: ArtefactConfig
                   ) -> tuple[list[Detection], int]:
    """main 52004af's ``_scan_cell``, on its own ``_runs``, ``_lattice_step`` and ``_spikes``
    (``_gaps`` is today's: its chunked parts are compared with main's below)."""
    distinct, counts = _old_runs(s)
    grid = artefacts.make_grid(s, _old_lattice_step(distinct) if len(distinct) < len(s) else 0.0,
                               config)
    if grid is None:
        return [], 0
    spikes = _old_spikes(distinct, counts, unit, config)
    smooth = artefacts._spike_free_counts(s, grid.edges, spikes)
    cutoffs: list[Detection] = ([] if grid.discrete or len(grid.counts) < 6
                                else artefacts._cutoffs(s, spikes, unit, config))
    gaps = artefacts._gaps(s, grid, smooth, unit, config)
    return cutoffs + gaps + spikes, 1 + 2 * len(distinct)


def _old_group_slices(frame: pl.DataFrame, scope: str, min_count: int
                      ) -> tuple[np.ndarray, list[tuple[str, int, int]]]:
    """main 52004af's ``_group_slices``: per-group row lists of the string column."""
    groups = (frame.select(pl.col(scope).cast(pl.String),
                           pl.int_range(pl.len(), dtype=pl.UInt32).alias("row"))
              .drop_nulls(scope).group_by(scope).agg("row")
              .filter(pl.col("row").list.len() >= min_count).sort(scope))
    sizes = groups["row"].list.len().to_numpy()
    slices = list(zip(groups[scope].to_list(), np.cumsum(sizes) - sizes, np.cumsum(sizes),
                      strict=True))
    return groups["row"].explode().to_numpy(), slices


def reference_artefacts(table: pl.DataFrame | pl.LazyFrame, fields: Sequence[str],
                        group_columns: Sequence[str] = ("label", "family"),
                        config: ArtefactConfig = DEFAULTS) -> pl.DataFrame:
    """main 52004af's ``detect_artefacts``."""
    lazy = table.lazy()
    frame = lazy.select(*dict.fromkeys(group_columns)).collect()
    rows: list[Artefact] = []
    n_tests = 0
    groups = {scope: _old_group_slices(frame, scope, config.min_count) for scope in group_columns}
    for field in fields:
        raw = lazy.select(pl.col(field).cast(pl.Float64)).collect().to_series().to_numpy()
        unit = artefacts._unit(field)
        for scope, (order, slices) in groups.items():
            values = raw[order]
            for label, start, stop in slices:
                s = np.sort(values[start:stop])
                s = s[np.searchsorted(s, -np.inf, "right"):np.searchsorted(s, np.inf, "left")]
                if len(s) < config.min_count:
                    continue
                found, tests = _old_scan_cell(s, unit, config)
                n_tests += tests
                rows += [{"scope": scope, "label": label, "field": field, **r} for r in found]
    return artefacts._finalise(rows, n_tests, config)


def _planted(seed: int, n_labels: int = 6, per_label: int = 3000) -> pl.DataFrame:
    """Labels two to a family, each with a smooth radius and temperature, and planted in label 0
    a ceiling on radius (a cutoff), in label 1 an empty band of temperature (a gap), in label 2
    a default radius (a spike); nulls, NaN and infinities scattered; one label too small to
    test, some rows with no label."""
    rng = np.random.default_rng(seed)
    n = n_labels * per_label
    code = np.repeat(np.arange(n_labels), per_label)
    rng.shuffle(code)
    radius = 10 ** (6.5 + 0.1 * code + 0.3 * rng.standard_normal(n))
    temperature = 300.0 + 10.0 * code + 30.0 * rng.standard_normal(n)
    ceiling = np.quantile(radius[code == 0], 0.8)
    radius = np.where((code == 0) & (radius > ceiling), ceiling * 0.5, radius)
    band = (code == 1) & (temperature > 310.0) & (temperature < 330.0)
    temperature[band] = temperature[band] - 40.0
    radius[np.flatnonzero(code == 2)[:60]] = 3.0e6
    radius[rng.choice(n, 40, replace=False)] = np.nan
    temperature[rng.choice(n, 20, replace=False)] = np.inf
    temperature[rng.choice(n, 20, replace=False)] = -np.inf
    labels = np.char.add("kind-", code.astype(str)).astype(object)
    labels[rng.choice(n, 50, replace=False)] = None
    table = pl.DataFrame({"label": labels, "family": np.char.add("fam-", (code // 2).astype(str)),
                          "radius": radius, "temperature": temperature})
    small = pl.DataFrame({"label": ["kind-few"] * 150, "family": ["fam-few"] * 150,
                          "radius": rng.uniform(1e6, 2e6, 150), "temperature": [300.0] * 150})
    return pl.concat([table, small]).with_columns(
        pl.when(pl.int_range(pl.len()) % 97 == 0).then(None).otherwise(pl.col("radius"))
        .alias("radius"))


def test_same_artefacts_as_main_on_a_planted_cutoff_gap_and_spike(tmp_path: Path) -> None:
    """Read from one table in memory and from three parquet files (row order across files)."""
    table = _planted(seed=21)
    new = detect_artefacts(table, ["radius", "temperature"])
    assert_frame_equal(new, reference_artefacts(table, ["radius", "temperature"]))
    by_label = new.filter(scope="label")
    assert by_label.filter(label="kind-0", field="radius", kind="cutoff").height == 1
    assert by_label.filter(label="kind-1", field="temperature", kind="gap").height == 1
    assert by_label.filter(label="kind-2", field="radius", kind="spike")["at"].to_list() == [3e6]
    for i, part in enumerate(table.iter_slices(7_000)):
        part.write_parquet(tmp_path / f"part-{i}.parquet")
    files = pl.scan_parquet(sorted(tmp_path.glob("part-*.parquet")))
    assert_frame_equal(detect_artefacts(files, ["radius", "temperature"]), new)


def test_same_artefacts_as_main_on_the_shipped_sample(tmp_path: Path) -> None:
    """The engine's artefacts.parquet on the sample, and the detector on its bodies, equal
    main's detector on the same bodies; the sample does hold artefacts."""
    check_file(SAMPLE, tmp_path / "run")
    bodies = scan_bodies(tmp_path / "run")
    expected = reference_artefacts(bodies, ARTEFACT_FIELDS)
    assert expected.height > 0
    assert_frame_equal(detect_artefacts(bodies, ARTEFACT_FIELDS), expected)
    assert_frame_equal(pl.read_parquet(tmp_path / "run" / "artefacts.parquet"), expected)


def test_more_groups_than_a_byte_holds_and_integer_labels() -> None:
    """300 groups need 16-bit codes; a non-string group column is grouped by its text, as before;
    a smaller ``min_count`` is honoured."""
    rng = np.random.default_rng(22)
    code = rng.integers(0, 300, 300 * 120)
    values = 10 ** (3 + 0.01 * code + 0.4 * rng.standard_normal(len(code)))
    values[code == 7] = np.round(values[code == 7], -3)
    table = pl.DataFrame({"label": code, "family": code % 3, "mass": values})
    config = ArtefactConfig(min_count=100)
    new = detect_artefacts(table, ["mass"], config=config)
    assert_frame_equal(new, reference_artefacts(table, ["mass"], config=config))
    assert not new.is_empty()
    labels, families = group_codes(table.lazy(), ["label", "family"], table.height, 100)
    assert artefact_columns._code_type(len(labels.names)) == np.uint16
    assert artefact_columns._code_type(len(families.names)) == np.uint8
    big = np.flatnonzero(np.bincount(code) >= 100)
    assert 255 < len(big) < 300 and labels.names == sorted(str(c) for c in big)
    np.testing.assert_array_equal(labels.rows(labels.names.index("7")), np.flatnonzero(code == 7))


@pytest.mark.parametrize("sample", [
    [1.0, 1.0, 1.0], [0.0, 1.0, 1.0, 2.5, 2.5, 2.5, 7.0], np.round(np.linspace(0, 9, 500), 1),
    np.sort(np.random.default_rng(23).standard_normal(1000)), np.arange(5.0) * 1e-9 + 1.0,
    [2.0], np.sort(np.random.default_rng(24).integers(0, 20, 400)).astype(float),
    np.repeat([1.0, 2.0, 3.0, 4.0, 5.0], [30, 2, 12, 1, 40]), [-0.0, -0.0, 0.0, 1.0, 1.0, 2.0]])
def test_chunked_runs_equal_mains(sample: Sequence[float]) -> None:
    """The chunked scans give what main's whole arrays of distinct values and counts gave: their
    number, the lattice step, the crowded values with their neighbours' counts and the spikes,
    the wide spacings and the rounding step around each."""
    s = np.asarray(sample, dtype=float)
    distinct, counts = _old_runs(s)
    n_distinct = artefact_runs.distinct_count(s)
    assert n_distinct == len(distinct)
    assert artefact_runs.lattice_step(s, n_distinct) == _old_lattice_step(distinct)
    for more_than in (0.0, 1.0, 2.5, 10.0):
        starts, stops = artefact_runs.crowded_runs(s, more_than)
        hits = np.flatnonzero(counts > more_than)
        np.testing.assert_array_equal(s[starts], distinct[hits])
        np.testing.assert_array_equal(stops - starts, counts[hits])
        if len(distinct) >= 3 and hits.size:
            new = artefacts._neighbour_counts(s, starts, stops)
            for got, want in zip(new, _old_neighbour_counts(counts, hits), strict=True):
                np.testing.assert_array_equal(got, want)
        config = ArtefactConfig(min_excess=more_than, spike_ratio=1.0)
        assert (artefacts._spikes(s, n_distinct, " kg", config)
                == _old_spikes(distinct, counts, " kg", config))
    for reach in (0.0, 1e-9, 0.1, 1.0):
        for log in (False, True) if s.size and s[0] > 0 else (False,):
            wide = np.concatenate([np.zeros(0, np.int64),
                                   *artefact_runs.wide_spacings(s, reach, log)])
            np.testing.assert_array_equal(wide, np.flatnonzero(
                s[1:] >= s[:-1] * 10**reach if log else s[1:] - s[:-1] >= reach))
    pairs = np.flatnonzero(np.diff(distinct) > 0) if len(distinct) > 1 else np.zeros(0, int)
    for fallback in (0.0, 0.1):
        low, high = distinct[pairs], distinct[pairs + 1]
        np.testing.assert_array_equal(artefacts.local_steps(s, low, high, fallback),
                                      _old_local_steps(distinct, low, high, fallback))


def test_a_gather_in_chunks_equals_numpys() -> None:
    """The chunked gather of a group's values from 4-byte row numbers equals numpy's."""
    rng = np.random.default_rng(27)
    values, rows = rng.standard_normal(100), rng.integers(0, 100, 30).astype(np.uint32)
    np.testing.assert_array_equal(artefact_columns.gather(values, rows), values[rows])


def test_a_group_column_without_values_and_an_empty_table() -> None:
    """No group in a column of nulls (the other column still tested); no rows, no artefacts."""
    rng = np.random.default_rng(25)
    table = pl.DataFrame({"label": pl.Series([None] * 400, dtype=pl.String), "family": "a",
                          "mass": rng.uniform(0.0, 1.0, 400)})
    new = detect_artefacts(table, ["mass"])
    assert_frame_equal(new, reference_artefacts(table, ["mass"]))
    assert new["scope"].to_list() == ["family"]  # uniform on [0, 1): its hard top end
    assert detect_artefacts(table.head(0), ["mass"]).is_empty()


def test_rows_grouped_chunk_by_chunk_equal_each_groups_rows(monkeypatch: pytest.MonkeyPatch
                                                           ) -> None:
    """Grouping the rows by a counting sort in chunks (here of 7 rows, so groups straddle chunk
    edges) gives each group's rows in table order, as a search of the codes does; the last code
    (no group) included, an absent code empty."""
    monkeypatch.setattr(artefact_columns, "ORDER_CHUNK", 7)
    codes = np.random.default_rng(26).integers(0, 5, 1000).astype(np.uint8)
    codes[codes == 3] = 2  # code 3: no row
    group = artefact_columns.GroupCodes.of("label", ["a", "b", "c", "d"], codes)
    for index in range(5):
        np.testing.assert_array_equal(group.rows(index), np.flatnonzero(codes == index))
    assert group.order.dtype == np.uint32 and group.rows(3).size == 0
