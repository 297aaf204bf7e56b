"""Files: the Sweep object, Touchstone, TOML files (line descriptions, catalogs, bands, site files),
characterization files, JSON and atomic writes. Builds physics objects from files; computes no findings."""
