"""photpipe.campaign."""

__all__ = []
