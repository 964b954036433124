"""photpipe.nucleus."""

__all__ = []
