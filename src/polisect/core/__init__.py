"""Core: what every stage shares — materials and their library, the phase map type,
tensor helpers, the quantities' names, the configuration's choices, errors, atomic files."""
