"""Covariscope report layer."""
