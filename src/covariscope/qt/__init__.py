"""Covariscope qt layer."""
