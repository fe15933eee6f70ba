"""The ``corepace`` command."""

from optimizer.cli.app import main

__all__ = ["main"]
