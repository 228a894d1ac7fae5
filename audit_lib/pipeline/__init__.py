"""The only part that knows both the site records and the physics: one audit, one result."""
