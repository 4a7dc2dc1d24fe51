"""Basics every layer uses: exact decimals, units, the expression reader, file writing.

Nothing here imports another part of calckit but :mod:`calckit.errors`, except the
display mixin's late binding to :mod:`calckit.render` (see :mod:`calckit.core.display`).
"""
