"""pathlen: exact path lengths from DXF and SVG drawings, with stated error bounds."""

__version__ = "0.1.0"
