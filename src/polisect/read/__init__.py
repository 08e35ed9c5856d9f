"""Read: a file (image, stack) into a `Micrograph` with its pixel size, and the run
configuration (TOML) into a checked `Config`."""
