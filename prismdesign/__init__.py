"""prismdesign: exact design of birefringent crystal prisms."""
__version__ = "0.1.0"
