"""photpipe.activity."""

__all__ = []
