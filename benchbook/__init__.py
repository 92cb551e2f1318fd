"""benchbook: lead-acid battery bank sizing, comparison, quoting and field checks."""

__version__ = "0.1.0"
