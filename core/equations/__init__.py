"""Equations as typed: the whitelist parser, code generation, compiled equations, templates and the trades' quantities."""
