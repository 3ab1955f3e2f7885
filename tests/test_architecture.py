"""The package's architecture holds: no import reaches up a floor, no import cycle, every module
says its job, and the contributor guide's map is the one drawn from the code."""

from __future__ import annotations

import architecture


def test_every_module_belongs_to_a_floor_and_says_its_job() -> None:
    floors = {floor for floor, _, _ in architecture.FLOORS}
    for module in architecture.modules():
        assert module.floor in floors, module.name
        assert module.job, f"{module.name} has no docstring saying its job"


def test_no_import_reaches_up_a_floor() -> None:
    assert architecture.upward_imports() == []


def test_the_science_imports_only_the_base_below_it() -> None:
    science = [m for m in architecture.modules() if m.floor == "science"]
    assert science, "the science floor is empty"
    for module in science:
        assert {architecture.floor_of(i) for i in module.imports} <= {"base", "science"}, module


def test_no_import_cycle() -> None:
    assert architecture.import_cycles() == []


def test_the_floor_check_sees_an_upward_import() -> None:
    """The checker itself: an import from storage inside the science floor is caught."""
    assert architecture.floor_rank("storage") > architecture.floor_rank("science")
    assert architecture.floor_of("bodycensus.storage.store") == "storage"
    assert architecture.floor_of("bodycensus.errors") == "base"
    assert architecture.floor_of("bodycensus.__main__") == "entry"


def test_the_guide_map_is_drawn_from_the_code() -> None:
    assert architecture.written_map() == architecture.render_map(), (
        "DEVELOPERS.md's module map is stale: run `python tests/architecture.py`")


def test_every_module_with_logic_has_a_test() -> None:
    assert architecture.untested_modules() == [], (
        "add a test file that imports these (tests/test_<module>.py), or say in "
        "architecture.TESTED_THROUGH which test exercises them")
    stale = [name for name in architecture.TESTED_THROUGH
             if name not in architecture.module_names() or name in architecture.tested_directly()]
    assert stale == [], f"TESTED_THROUGH lists modules that no longer need it: {stale}"
