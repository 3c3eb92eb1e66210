"""cardgen: printable route power cards and a static site from GPX routes."""

__version__ = "0.1.0"
