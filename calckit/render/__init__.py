"""Rendering: step records and numbers to LaTeX, text and HTML with MathML; the page; PDF through Chromium."""
