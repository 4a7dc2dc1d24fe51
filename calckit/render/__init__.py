"""Rendering: LaTeX to MathML and self-contained HTML pages for exported sheets."""
