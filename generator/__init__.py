"""thermofolio: a cited, reviewed thermochemical handbook kept as YAML and published as HTML."""

__version__ = "0.1.0"
