"""Covariscope analysis layer."""
