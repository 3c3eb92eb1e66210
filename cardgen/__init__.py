"""cardgen: printable route power cards and a static site from GPX routes."""

__version__ = "0.2.0"
