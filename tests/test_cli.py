"""The command line's shell (``cli/main.py``): every command, its help, and bad input as one line
with exit code 2, run as a real process. ``check`` itself: test_check_cli.py."""

from __future__ import annotations

from pathlib import Path

from cli_support import bodycensus


def test_bad_input_exits_2_with_one_line(tmp_path: Path) -> None:
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    for args in (("check", str(empty)), ("check", str(tmp_path / "missing.csv")),
                 ("check", str(empty), "--unit", "mass=furlong")):
        done = bodycensus(*args)
        assert done.returncode == 2, args
        assert done.stderr.count("\n") == 1 and done.stderr.startswith("bodycensus check:")
        assert "Traceback" not in done.stderr


def test_every_command_has_help() -> None:
    for command in ("serve", "check", "demo", "bench"):
        done = bodycensus(command, "--help")
        assert done.returncode == 0 and "usage: bodycensus " + command in done.stdout
