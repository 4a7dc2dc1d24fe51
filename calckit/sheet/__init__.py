"""The calculation sheet as data and its HTML, one module per job.

``blocks`` the frozen block records (inputs, steps, results, checks, figures, tables,
text) and the margin rule; ``values`` how values are read and shown; ``checking`` the
acceptance checks; ``record`` the typed, versioned JSON record and its reader;
``sheet`` the :class:`Sheet` itself (adding blocks, fingerprint, saving); ``html`` the
sheet as HTML for the file and the notebook.
"""

from calckit.sheet.blocks import DEFAULT_CAUTION, Check, check_margin
from calckit.sheet.record import RECORD_VERSION, SheetRecord, existing_fingerprint, read_record
from calckit.sheet.sheet import Sheet, in_kernel

__all__ = [
    "DEFAULT_CAUTION",
    "RECORD_VERSION",
    "Check",
    "Sheet",
    "SheetRecord",
    "check_margin",
    "existing_fingerprint",
    "in_kernel",
    "read_record",
]
