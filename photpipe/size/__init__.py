"""photpipe.size."""

__all__ = []
