"""Harmless payload: importing this module writes a MARKER file next to it."""

from pathlib import Path

Path(__file__).with_name("MARKER").write_text("imported\n")


class Model:
    def fit(self, X, y):
        return self
