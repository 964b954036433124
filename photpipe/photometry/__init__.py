"""photpipe.photometry."""

__all__ = []
