"""Exporters: read result dataclasses and write files; they compute nothing of their own."""
