"""Physical families of bodies, guessing a family from a catalogue's label, per-family parameters.

A catalogue's ``label`` is its own type string; the ``family`` is ours and decides which rules
apply and with which parameters. The label -> family mapping is guessed by keywords and can be
overridden (``--family "label=family"`` or the mapping step in the dashboard).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from bodycensus.errors import InputError

FAMILIES: tuple[str, ...] = (
    "iron", "rock", "rock_ice", "ice", "ocean", "gas_giant", "ice_giant", "brown_dwarf",
    "star", "giant_star", "white_dwarf", "neutron_star", "black_hole", "minor", "ring", "unknown",
)
# A ring is not a body: its row holds a ring's edges about its parent (the planet), and only the
# ring rules judge it.
RING_FAMILIES = frozenset({"ring"})
BODY_FAMILIES = frozenset(FAMILIES) - RING_FAMILIES
SOLID_FAMILIES = frozenset({"iron", "rock", "rock_ice", "ice", "ocean", "minor"})
FLUID_FAMILIES = frozenset({"gas_giant", "ice_giant", "brown_dwarf", "star", "giant_star"})
PLANETARY_FAMILIES = SOLID_FAMILIES | {"gas_giant", "ice_giant"}
STELLAR_FAMILIES = frozenset({"star", "giant_star", "white_dwarf", "neutron_star", "black_hole"})
NON_STELLAR_FAMILIES = BODY_FAMILIES - STELLAR_FAMILIES  # planets, moons, minor bodies, ...


@dataclass(frozen=True)
class DensityBand:
    """Plausible bulk density at a given mass: ``low_factor`` x the ``low_curve`` density up to
    ``high_factor`` x the ``high_curve`` density. A curve is a composition name understood by the
    rules ("iron", "rock", "water_ice", "cold_hhe", "white_dwarf", "main_sequence",
    "largest_star") or "const",
    in which case the factor is itself the density in kg m-3."""

    low_curve: str
    low_factor: float
    high_curve: str
    high_factor: float


@dataclass(frozen=True)
class FamilyParameters:
    """What the rules need to know about a family."""

    density_band: DensityBand | None
    rigidity: float  # Pa; for tidal locking (Gladman et al. 1996 typical values)
    quality_factor: float  # tidal Q (common practice: ~100 for solid bodies)


# Bands are wide on purpose: a body outside them is suspect, not impossible. The factors are
# common practice chosen so that every Solar System body of the family lies inside its band
# (JPL SSD densities), e.g. the Moon (3344) sits above 0.6 x the Seager rock curve (~4300).
_ROCK, _ICE = 3e10, 4e9  # Pa; rock and ice rigidities (Gladman et al. 1996)
FAMILY_PARAMETERS: dict[str, FamilyParameters] = {
    "iron": FamilyParameters(DensityBand("rock", 1.0, "iron", 1.15), _ROCK, 100.0),
    "rock": FamilyParameters(DensityBand("rock", 0.6, "iron", 1.0), _ROCK, 100.0),
    "rock_ice": FamilyParameters(DensityBand("water_ice", 0.7, "rock", 1.0), _ICE, 100.0),
    "ice": FamilyParameters(DensityBand("water_ice", 0.3, "rock", 0.9), _ICE, 100.0),
    "ocean": FamilyParameters(DensityBand("water_ice", 0.7, "rock", 1.0), _ICE, 100.0),
    "minor": FamilyParameters(DensityBand("const", 150.0, "iron", 1.1), _ROCK, 100.0),
    "gas_giant": FamilyParameters(DensityBand("const", 30.0, "cold_hhe", 3.0), _ROCK, 1e5),
    # super-puffs reach 30-100 kg m-3 (Kepler-51 b ~30: Masuda 2014, ApJ 783, 53; Libby-Roberts
    # et al. 2020, AJ 159, 57) below the Solar System's ice giants
    "ice_giant": FamilyParameters(DensityBand("const", 30.0, "rock", 1.0), _ICE, 1e4),
    # young brown dwarfs are still contracting: 55 M_jup at 11 R_jup (~50 kg m-3) in a catalogue
    # of hosts (issue 12); the low edge is that of the youngest, not of cold H/He
    "brown_dwarf": FamilyParameters(DensityBand("const", 30.0, "cold_hhe", 3.0), _ROCK, 1e5),
    # Any star that is not degenerate: from the largest supergiants (giants and pre-main-sequence
    # stars are less dense than the main sequence) up to hot subdwarfs (sdB, log g up to 6.2 at
    # ~0.47 M_sun: ~220x the main-sequence density; Heber 2009, ARA&A 47, 211).
    "star": FamilyParameters(DensityBand("largest_star", 1.0, "main_sequence", 300.0), _ROCK, 1e6),
    "giant_star": FamilyParameters(DensityBand("const", 1e-10, "const", 300.0), _ROCK, 1e6),
    "white_dwarf": FamilyParameters(DensityBand("white_dwarf", 0.2, "white_dwarf", 5.0), _ROCK,
                                    1e6),
    "neutron_star": FamilyParameters(DensityBand("const", 1e16, "const", 3e18), _ROCK, 1e6),
    "black_hole": FamilyParameters(None, _ROCK, 1e6),
    "ring": FamilyParameters(None, _ICE, 100.0),
    "unknown": FamilyParameters(None, _ROCK, 100.0),
}

# Ordered: the first family whose keyword occurs in the label wins, so specific words come first.
_KEYWORDS: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("black_hole", ("black hole", "blackhole", "black_hole", "singularity")),
    ("neutron_star", ("neutron", "pulsar", "magnetar")),
    ("white_dwarf", ("white dwarf", "white_dwarf", "whitedwarf", "degenerate")),
    ("brown_dwarf", ("brown dwarf", "brown_dwarf", "browndwarf", "substellar", "l dwarf",
                     "t dwarf", "y dwarf")),
    ("giant_star", ("giant star", "red giant", "supergiant", "hypergiant", "subgiant",
                    "bright giant", "giant_star", "asymptotic")),
    ("ice_giant", ("ice giant", "ice_giant", "icegiant", "neptunian", "sub-neptune",
                   "mini-neptune", "neptune")),
    ("gas_giant", ("gas giant", "gas_giant", "gasgiant", "jovian", "jupiter", "hot giant",
                   "super-puff", "puff")),
    ("ocean", ("ocean", "water world", "waterworld", "aquatic", "hycean")),
    ("rock_ice", ("rock-ice", "rock_ice", "rocky-icy", "icy-rocky", "rock ice", "dirty ice",
                  "mixed")),
    ("iron", ("iron", "metal", "ferrous", "core remnant")),
    ("ice", ("icy", "ice", "frozen", "glacial", "cryo")),
    ("minor", ("asteroid", "comet", "planetesimal", "minor", "rubble", "moonlet", "boulder",
               "trojan", "centaur", "kuiper", "fragment")),
    ("rock", ("rocky", "rock", "terrestrial", "silicate", "lava", "desert", "barren",
              "super-earth", "super earth", "earth-like", "dwarf planet", "stony")),
    ("star", ("star", "sun", "main sequence", "main-sequence", "dwarf star", "red dwarf",
              "yellow dwarf", "orange dwarf")),
)
# A ring, ringlet or ring system, as a word of its own ("ringed giant" is a planet): checked
# before the keywords, so that a label naming both a ring and its material is a ring, not a
# body of that material.
_RING = re.compile(r"\b(rings?|ringlets?|ring system|annulus)\b")
# Stellar spectral classes on their own (e.g. "G2V", "M4.5V", "K0 V") are main-sequence stars.
_SPECTRAL_CLASS = re.compile(r"^[obafgkm]\d?(\.\d)?\s*(v|iv)?$")


def guess_family(label: str | None) -> str:
    """Our family for a catalogue label, by keywords; ``unknown`` when nothing matches."""
    return explain_family(label)[0]


def explain_family(label: str | None) -> tuple[str, str]:
    """Our family for a catalogue label and why, in words: the keyword that matched, or that
    none did (a label such as 'moon' says where a body is, not what it is made of)."""
    if not label:
        return "unknown", "the label is blank"
    text = label.strip().lower().replace("_", " ")
    if text.replace(" ", "_") in FAMILIES:
        return text.replace(" ", "_"), "the label is the family's own name"
    if _SPECTRAL_CLASS.match(text):
        return "star", "a main-sequence spectral class"
    if (ring := _RING.search(text)) is not None:
        return "ring", f"the label names a ring ('{ring[0]}')"
    for family, words in _KEYWORDS:
        word = next((w for w in words if w in text), None)
        if word is not None:
            return family, f"the label contains '{word}'"
    return "unknown", ("no word of composition or kind in the label (such as rocky, icy, iron, "
                       "gas giant, star)")


class FamilyMappingError(InputError):
    """A ``label=family`` override that names no family of ours."""


def parse_family_override(text: str) -> tuple[str, str]:
    """Split ``"label=family"``; the family must be one of FAMILIES."""
    label, sep, family = text.rpartition("=")
    if not sep or not label:
        raise FamilyMappingError(f"family override '{text}' must look like 'label=family'")
    family = family.strip()
    if family not in FAMILIES:
        raise FamilyMappingError(
            f"'{family}' is not a family; use one of: {', '.join(FAMILIES)}"
        )
    return label.strip(), family


def family_mapping(labels: list[str], overrides: dict[str, str] | None = None) -> dict[str, str]:
    """The family of each distinct label: overrides first, then the keyword guess."""
    overrides = overrides or {}
    return {label: overrides.get(label, guess_family(label)) for label in labels}
