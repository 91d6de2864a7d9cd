"""pathlen: exact path lengths from drawings, with stated error bounds."""

__version__ = "0.1.0"
