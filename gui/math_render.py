"""The equation in mathematical form for the window's panels: core.equations.math_html under the window's name.

The printer is plain sympy-to-text work, so it lives in core, where the study report uses it too.
"""

from core.equations.math_html import equation_html, expression_html, symbol_html, term_html, terms_html

__all__ = ["equation_html", "expression_html", "symbol_html", "term_html", "terms_html"]
