"""The enclosure in space.

Geometry, surfaces and screens, maps, emitter failures and the one inverse search.
"""
