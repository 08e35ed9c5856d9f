"""Pipeline: `analyze` runs one section through every stage into a typed `Result`."""
