"""Package version (a leaf module: no firnray imports)."""

__version__ = "0.1.0"
