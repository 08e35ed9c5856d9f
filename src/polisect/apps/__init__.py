"""Apps: the front ends — the command line, `run_section` (the one analyse-and-write
path), batches of folders (local or Dask), comparison of batches, the drop-in page, the
estimate verb and the benchmark."""
