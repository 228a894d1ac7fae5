"""Targets and judgement.

Zone ranges by species group, checks with stable ids, verdicts and actions.
"""
