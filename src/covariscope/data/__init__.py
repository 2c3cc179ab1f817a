"""Covariscope data layer."""
