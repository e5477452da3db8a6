"""tapgauge: check touch targets on mobile app screens against published minimums."""

__version__ = "0.1.0"
