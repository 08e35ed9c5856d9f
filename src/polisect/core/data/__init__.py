"""Data files shipped with polisect (the built-in material library)."""
