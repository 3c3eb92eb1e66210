"""Vehicles, riders and the e-assist catalogue: reading their TOML, one table
validator, and one table of limits and defaults that the command line, the site
configuration and the profiles all use."""
