"""``python -m calcdoc``."""

from calcdoc.cli import entry

entry()
