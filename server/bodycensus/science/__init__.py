"""The science floor: units and constants, physical families, formulas, rules and distribution
artefacts. Imports only the base floor (errors)."""
