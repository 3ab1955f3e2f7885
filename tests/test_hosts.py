"""Tables as real catalogues come: one row per planet with host columns, null sentinels,
repeated column names and headers without units, read through the real ingest."""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pytest

from bodycensus.input.hosts import HostColumns
from bodycensus.input.ingest import IngestError, ingest
from bodycensus.science.units import AU, M_JUPITER, M_SUN, R_SUN

# Two planets of one star and one of another, as exoplanet.eu lays them out (star_* columns
# beside each planet); values of 51 Peg b and the 55 Cnc planets rounded from the catalogue.
PLANETS = """name,mass [M_jup],a [AU],star_name,star_mass,star_radius,star_teff
55 Cnc b,0.831,0.1134,55 Cnc,0.905,0.943,5172
55 Cnc e,0.0251,0.01544,55 Cnc,,0.96,
51 Peg b,0.46,0.052,51 Peg,1.11,1.266,5768
"""
HOSTS = HostColumns({"name": "star_name", "mass": "star_mass", "radius": "star_radius",
                     "temperature": "star_teff"}, {"mass": "solar_mass", "radius": "solar_radius"})


def _ingest(tmp_path: Path, text: str, **options: object) -> tuple[pl.DataFrame, list[str]]:
    source = tmp_path / "planets.csv"
    source.write_text(text)
    header = text.split(",", 1)[0]
    ids = {"id": "name", "name": "name"} if header == "name" else None
    report = ingest(source, tmp_path / "out.parquet", map_overrides=ids,
                    **options)  # type: ignore[arg-type]
    return pl.read_parquet(tmp_path / "out.parquet"), report.notes


def test_host_columns_become_one_row_per_host(tmp_path: Path) -> None:
    table, notes = _ingest(tmp_path, PLANETS, hosts=HOSTS)
    assert table["id"].to_list() == ["55 Cnc b", "55 Cnc e", "51 Peg b", "55 Cnc", "51 Peg"]
    assert table["parent"].to_list() == ["55 Cnc", "55 Cnc", "51 Peg", None, None]
    assert table["system"].to_list() == ["55 Cnc", "55 Cnc", "51 Peg", "55 Cnc", "51 Peg"]
    hosts = table.filter(pl.col("label") == "host star").sort("id")
    # the first value given for each field: 55 Cnc's mass from its first planet's row
    assert hosts["mass"].to_list() == pytest.approx([1.11 * M_SUN, 0.905 * M_SUN])
    assert hosts["radius"].to_list() == pytest.approx([1.266 * R_SUN, 0.943 * R_SUN])
    assert hosts["temperature"].to_list() == [5768.0, 5172.0]
    assert hosts["_row"].to_list() == [3, 1]  # the row of each host's first planet
    assert table["mass"][0] == pytest.approx(0.831 * M_JUPITER)
    assert table["semi_major_axis"][2] == pytest.approx(0.052 * AU)
    assert any(n.startswith("host rows built from the host columns: name from 'star_name'")
               for n in notes)
    assert any(n.startswith("host temperature from 'star_teff' read in K (SI)") for n in notes)


def test_without_a_host_name_each_planet_gets_a_host_of_its_own(tmp_path: Path) -> None:
    hosts = HostColumns({"mass": "star_mass"}, {"mass": "solar_mass"})
    table, notes = _ingest(tmp_path, PLANETS, hosts=hosts)
    assert table.filter(pl.col("label") == "host star")["id"].to_list() == [
        "host of 55 Cnc b", "host of 55 Cnc e", "host of 51 Peg b"]
    assert table["parent"][0] == "host of 55 Cnc b"
    assert any("no host name column" in n for n in notes)


def test_a_body_named_as_its_own_host_has_no_parent_and_no_extra_row(tmp_path: Path) -> None:
    # exoplanet.eu lists some brown dwarfs with star_name equal to their own name
    text = ("name,mass [M_jup],star_name,star_mass\n"
            "2M 1450 A,60,2M 1450 A,\n2M 1450 b,9,2M 1450 A,\n")
    table, _ = _ingest(tmp_path, text, hosts=HostColumns({"name": "star_name",
                                                          "mass": "star_mass"}))
    assert table["id"].to_list() == ["2M 1450 A", "2M 1450 b"]
    assert table["parent"].to_list() == [None, "2M 1450 A"]


def test_host_columns_that_cannot_be_used_are_refused_in_one_line(tmp_path: Path) -> None:
    for hosts, says in ((HostColumns({"name": "nope"}), "no column 'nope'"),
                        (HostColumns({"id": "star_name"}), "a host's id is made here"),
                        (HostColumns({"name": "star_name"}, {"mass": "solar_mass"}),
                         "no host column for mass")):
        with pytest.raises(IngestError, match=says) as caught:
            _ingest(tmp_path, PLANETS, hosts=hosts)
        assert "\n" not in str(caught.value)


def test_null_sentinels_are_empty_not_bad(tmp_path: Path) -> None:
    text = "id,mass [kg],radius [m]\nA,-99,--\nB,5,7\n"
    table, notes = _ingest(tmp_path, text, nulls=("-99", "--"))
    assert table["mass"].to_list() == [None, 5.0]
    assert table["radius"].to_list() == [None, 7.0]
    assert table["_bad"].to_list() == [None, None]
    assert "cells reading '-99', '--' taken as empty" in notes
    table, _ = _ingest(tmp_path, text)
    assert table["mass"][0] == -99.0 and table["_bad"][0] == "radius"  # without --null


def test_repeated_columns_are_read_under_their_new_names(tmp_path: Path) -> None:
    text = "id,mass [kg],err,err,radius [m],err,err\nA,5,1,2,7,0.5,0.6\n"
    table, notes = _ingest(tmp_path, text)
    # the renamed first 'err' of each value reads as its uncertainty (mass_err, radius_err);
    # the second is kept under its new name
    assert table["mass_error"].to_list() == [1.0] and table["radius_error"].to_list() == [0.5]
    assert table["radius_err_2"].to_list() == ["0.6"]
    assert "planets.csv: column 3 'err' (repeated) read as 'mass_err'" in notes


def test_a_header_without_a_unit_is_said_to_be_si(tmp_path: Path) -> None:
    _, notes = _ingest(tmp_path, "id,mass,radius [km]\nA,5,7\n")
    assert notes == ["mass from 'mass' read in kg (SI): its header names no unit; if it is in "
                     "another, give --unit mass=UNIT"]


def test_one_field_in_two_units_is_coalesced_and_said(tmp_path: Path) -> None:
    # hosts in solar masses, planets in Jupiter masses, in two columns of one table
    text = "id,mass [M_sun],mass [M_jup]\nS,1.0,\nb,,2.0\nc,,\n"
    table, notes = _ingest(tmp_path, text)
    assert table["mass"].to_list()[:2] == pytest.approx([M_SUN, 2 * M_JUPITER])
    assert table["mass"][2] is None
    assert notes == ["mass from 'mass [M_sun]' (solar_mass), else from 'mass [M_jup]' "
                     "(jupiter_mass): one field in two units, each row takes the first given"]
    # with --unit the field takes its one column, and the other is kept as it is
    source = tmp_path / "planets.csv"
    report = ingest(source, tmp_path / "u.parquet", unit_overrides={"mass": "solar_mass"})
    assert report.mapping.conflicts == {"mass": ["mass [M_jup]"]}
