"""Reading input files: the only package that opens them (GPX, TOML, CSV, profiles)."""
