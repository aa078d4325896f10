"""Mixtype's computational core: pure Python with numpy, sympy, scipy; never imports Qt."""

__version__ = "0.1.0"
