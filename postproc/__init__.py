"""Postproc: the command line, the exports and the report (knows people, not mechanics)."""
