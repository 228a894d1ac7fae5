"""The audit history store (SQLite, derived from the readings folder) and lamp decay fits."""
