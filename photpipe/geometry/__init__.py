"""photpipe.geometry."""

__all__ = []
