"""Pure, vectorised physics in SI units: no I/O, no printing."""
