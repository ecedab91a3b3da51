"""rulecheck: design-rule checks for building water-supply layouts."""

__version__ = "0.1.0"
