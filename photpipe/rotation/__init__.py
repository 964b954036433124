"""photpipe.rotation."""

__all__ = []
