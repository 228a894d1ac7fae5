"""Light sources: emitter line shapes, phosphor bands, beam patterns and lamp models."""
