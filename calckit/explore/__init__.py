"""The what-if explorer: sliders over a template's calculation (ipywidgets imported only here).

:func:`explore` is light to import; the explorer itself (:mod:`calckit.explore.explorer`)
loads sympy, numpy and ipywidgets when it is first opened.
"""


def explore(*args, **kwargs):
    """Open the what-if explorer; see :func:`calckit.explore.explorer.explore` for the parameters."""
    from calckit.explore.explorer import explore as _open

    return _open(*args, **kwargs)
