"""The kit's version, in one place (it enters every sheet's fingerprint)."""

__version__ = "0.1.0"
