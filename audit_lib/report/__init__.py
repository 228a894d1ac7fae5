"""Figures and tables that the workbooks show.

Submodules import matplotlib themselves; importing this package stays cheap.
"""
