"""Mixtype's bundled files: equation templates, demo projects with their data, and the project JSON Schemas.

In the repository this is the top-level resources/ folder; an installed Mixtype carries it as the package
``mixtype_resources``. Code finds these files through core.bundled, never by a path of its own.
"""
