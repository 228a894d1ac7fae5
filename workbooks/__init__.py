"""The parameterised workbooks, shipped in the package as ``audit_lib.workbooks``.

This file only makes the folder a package so that the build maps it into ``audit_lib``
(``pyproject.toml``) and the batch finds the workbooks with :mod:`importlib.resources`.
"""
