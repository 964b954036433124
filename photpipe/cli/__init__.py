"""photpipe.cli."""

__all__ = []
