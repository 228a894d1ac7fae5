"""The nbconvert report template, shipped in the package as ``audit_lib.templates``.

This file only makes the folder a package so that the build maps it into ``audit_lib``
(``pyproject.toml``) and the reports find the template with :mod:`importlib.resources`.
"""
