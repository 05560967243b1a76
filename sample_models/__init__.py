"""Bundled sample models (data only; see README.md in this folder)."""
