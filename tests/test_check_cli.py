"""``bodycensus check`` against the headless contract in DESIGN.md, run as a real process."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from cli_support import CLEAN, HEADER, IRON_IMPOSSIBLE, bodycensus

from bodycensus.cli import check
from bodycensus.cli.main import main


@pytest.fixture()
def clean_csv(tmp_path: Path) -> Path:
    path = tmp_path / "clean.csv"
    path.write_text(HEADER + CLEAN)
    return path


@pytest.fixture()
def broken_csv(tmp_path: Path) -> Path:
    path = tmp_path / "broken.csv"
    path.write_text(HEADER + CLEAN + IRON_IMPOSSIBLE)
    return path


def test_json_has_the_contract_shape(broken_csv: Path) -> None:
    done = bodycensus("check", str(broken_csv), "--format", "json")
    assert done.returncode == 0, done.stderr
    document = json.loads(done.stdout)
    assert set(document) == {"catalogue", "summary", "findings", "artefacts"}
    assert document["summary"]["rows"] == 3
    finding = next(f for f in document["findings"] if f["rule"] == "denser-than-iron")
    assert set(finding) >= {"body", "rule", "severity", "value", "limit", "unit", "margin",
                            "message", "source"}
    assert finding["body"] == "lead" and finding["severity"] == "impossible"
    assert document["catalogue"]["mapping"]["choices"]["radius"]["unit"] == "km"


def test_fail_on_sets_the_exit_code(clean_csv: Path, broken_csv: Path) -> None:
    assert bodycensus("check", str(broken_csv), "--fail-on", "impossible").returncode == 1
    assert bodycensus("check", str(broken_csv), "--fail-on", "error").returncode == 0
    assert bodycensus("check", str(clean_csv), "--fail-on", "note").returncode == 0


def test_map_and_unit_overrides(tmp_path: Path) -> None:
    path = tmp_path / "odd.csv"
    path.write_text("designation,kind,host,heft,size,dist\nsol,yellow dwarf star,,1,1,\n"
                    "terra,terrestrial planet,sol,0.000003003,0.009158,1\n")
    done = bodycensus("check", str(path), "--map", "id=designation", "--map", "mass=heft",
                      "--map", "radius=size", "--unit", "mass=solar_mass",
                      "--unit", "radius=solar_radius", "--map", "semi_major_axis=dist",
                      "--unit", "semi_major_axis=au", "--format", "json")
    assert done.returncode == 0, done.stderr
    document = json.loads(done.stdout)
    assert document["findings"] == []
    assert document["catalogue"]["mapping"]["choices"]["mass"]["column"] == "heft"


def test_csv_and_table_formats(broken_csv: Path) -> None:
    csv_out = bodycensus("check", str(broken_csv), "--format", "csv").stdout.splitlines()
    assert csv_out[0].startswith("body,rule,severity,value,limit,unit,margin,message,source")
    assert any(line.startswith("lead,denser-than-iron,impossible") for line in csv_out)
    table = bodycensus("check", str(broken_csv)).stdout
    assert "3 bodies" in table and "denser-than-iron" in table


def test_the_catalogue_says_how_the_file_was_read(broken_csv: Path) -> None:
    document = json.loads(bodycensus("check", str(broken_csv), "--format", "json").stdout)
    catalogue = document["catalogue"]
    assert list(catalogue)[:2] == ["file", "name"] and list(catalogue)[-1] == "label_families"
    assert catalogue["name"] == "broken.csv" and catalogue["format"] == "delimited"
    assert catalogue["delimiter"] == "," and catalogue["compression"] is None
    assert catalogue["label_families"] == {"terrestrial planet": "rock",
                                           "yellow dwarf star": "star"}
    assert {"rows", "findings", "by_severity", "coverage"} <= set(document["summary"])


def test_progress_on_stderr_names_every_stage(broken_csv: Path) -> None:
    done = bodycensus("check", str(broken_csv), "--progress", "--format", "csv")
    stages = [line.split()[2] for line in done.stderr.splitlines()]
    assert stages == ["read", "read", "derive", "rules", "rules", "artefacts", "write"]
    assert all(line.startswith("bodycensus check: ") for line in done.stderr.splitlines())
    assert "rows            3" in done.stderr.splitlines()[1]  # known once the file is read
    quiet = bodycensus("check", str(broken_csv), "--quiet")
    assert quiet.stderr == "" and "denser-than-iron" in quiet.stdout


def test_table_limit_and_family_override(broken_csv: Path) -> None:
    table = bodycensus("check", str(broken_csv), "--limit", "0").stdout
    assert "more (use --format json or csv for all)" in table
    assert "denser-than-iron" not in table.split("\n", 2)[2]
    done = bodycensus("check", str(broken_csv), "--family", "terrestrial planet=iron",
                      "--format", "json")
    assert json.loads(done.stdout)["catalogue"]["label_families"]["terrestrial planet"] == "iron"


@pytest.mark.parametrize("fmt", ["json", "csv"])
def test_output_written_slice_by_slice_equals_one_piece(
        fmt: str, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch) -> None:
    """The findings go out 7 rows at a time (slices meet inside the list): the same text as in
    one piece, byte for byte but the run's seconds; the JSON parses."""
    sample = Path(__file__).resolve().parents[1] / "sample_data" / "varrow_shoals.csv"

    def printed(rows: int) -> str:
        monkeypatch.setattr(check, "OUTPUT_ROWS", rows)
        assert main(["check", str(sample), "--format", fmt]) == 0
        return "\n".join(line for line in capsys.readouterr().out.splitlines()
                         if '"seconds"' not in line)

    whole, sliced = printed(10**9), printed(7)
    assert sliced == whole and whole.count("\n") > 50
    if fmt == "json":
        assert len(json.loads(sliced)["findings"]) > 7
