"""Readers: files, column names and units in; one validated model in internal units out.

Internal unit system (used everywhere past this package): length mm, force N, moment N·mm,
stress MPa (N/mm²). Every conversion happens once, here.
"""

from flangewise.readers.errors import InputError, Problem
from flangewise.readers.load import load_model
from flangewise.readers.model import Model
from flangewise.readers.settings import Settings, read_settings

__all__ = ["InputError", "Model", "Problem", "Settings", "load_model", "read_settings"]
