"""scorewright: build, validate and monitor points scorecards for credit applications."""

__version__ = "0.1.0"

__all__ = ["__version__"]
