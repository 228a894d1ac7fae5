"""Orchestration.

Papermill and nbconvert, the batch, results files, the what-if widgets and the CLI.
"""
