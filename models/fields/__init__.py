"""A 2-D quasi-static field solver for transmission-line cross-sections (pure numpy/scipy)."""
