"""tdmtui: therapeutic drug monitoring in the terminal."""

__version__ = "0.1.0"
