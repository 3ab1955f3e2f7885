"""The rule registry: every rule as a small record, evaluated over the derived context.

``all_rules()`` lists them in report order; ``rules/base.py`` runs them.
"""

from __future__ import annotations

from bodycensus.science.rules.base import Rule
from bodycensus.science.rules.body import body_rules
from bodycensus.science.rules.errors import error_rules
from bodycensus.science.rules.orbit import OrbitSettings, orbit_rules
from bodycensus.science.rules.rings import ring_rules
from bodycensus.science.rules.statistics import statistics_rules
from bodycensus.science.rules.tides import tide_rules


def all_rules(orbit_settings: OrbitSettings | None = None) -> tuple[Rule, ...]:
    """Every rule, errors first (orbit thresholds at their defaults unless given)."""
    settings = orbit_settings or OrbitSettings()
    return (*error_rules(), *body_rules(), *orbit_rules(settings), *ring_rules(settings),
            *tide_rules(settings), *statistics_rules())


RULE_IDS: tuple[str, ...] = tuple(rule.id for rule in all_rules())
RULES_BY_ID: dict[str, Rule] = {rule.id: rule for rule in all_rules()}
