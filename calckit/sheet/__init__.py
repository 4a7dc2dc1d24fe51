"""The calculation sheet as data (inputs, steps, checks, figures, sign-off, fingerprint) and its HTML."""

from calckit.sheet.sheet import DEFAULT_CAUTION, Check, Sheet, check_margin, existing_fingerprint, in_kernel

__all__ = ["DEFAULT_CAUTION", "Check", "Sheet", "check_margin", "existing_fingerprint", "in_kernel"]
