"""The calculation sheet as data and its HTML, one module per job.

``blocks`` the frozen block records (inputs, steps, results, checks, figures, tables,
text) and the margin rule; ``values`` how values are read and shown; ``output_units`` the units results are shown in
(US customary or chosen) and one system a substitution; ``checking`` the
acceptance checks; ``record`` the typed, versioned JSON record and its reader;
``sheet`` the :class:`Sheet` itself (adding blocks, fingerprint, saving); ``html`` the
sheet as HTML for the file and the notebook.

The names load on first use (one table, as in :mod:`calckit.workflow`): a build reads
the record its kernel wrote without loading sympy and pint into the command's process.
"""

from calckit.core.lazy import lazy_names

# the folder's public names and the module that holds each
_NAMES = {
    "DEFAULT_CAUTION": "calckit.sheet.blocks",
    "Check": "calckit.sheet.blocks",
    "check_margin": "calckit.sheet.blocks",
    "RECORD_VERSION": "calckit.sheet.record",
    "SheetRecord": "calckit.sheet.record",
    "existing_fingerprint": "calckit.sheet.record_reading",
    "OutputUnits": "calckit.sheet.output_units",
    "apply_units": "calckit.sheet.output_units",
    "read_record": "calckit.sheet.record_reading",
    "record_from_dict": "calckit.sheet.record_reading",
    "SAMPLING_KEYS": "calckit.sheet.sheet",
    "Sheet": "calckit.sheet.sheet",
    "in_kernel": "calckit.sheet.sheet",
    "DISTRIBUTIONS": "calckit.sheet.tolerance_study",
    "FEWEST_SAMPLES": "calckit.sheet.tolerance_study",
    "MOST_SAMPLES": "calckit.sheet.tolerance_study",
    "sample_request": "calckit.sheet.tolerance_study",
}


__getattr__, __dir__ = lazy_names(__name__, _NAMES)

__all__ = sorted(_NAMES)
