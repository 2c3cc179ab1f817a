"""Covariscope: decide, covariate by covariate, what to adjust for and why."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("covariscope")
except PackageNotFoundError:  # running from a source tree without installation
    __version__ = "0.1.0"

__all__ = ["__version__"]
