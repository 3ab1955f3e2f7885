"""bodycensus: find the bodies that physics rules out in catalogues of planets, moons and stars."""

__version__ = "0.1.0"
