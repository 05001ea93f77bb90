"""rarefy: direct simulation Monte Carlo (DSMC) of rarefied gas flows."""

__version__ = "0.1.0"
__all__ = ["__version__"]
