"""workbench: a terminal workbench for investigating SPC signals."""

__version__ = "0.1.0"
