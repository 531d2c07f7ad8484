"""Analyses: pure functions of the model, each returning a complete result object."""
