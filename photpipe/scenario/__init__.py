"""photpipe.scenario."""

__all__ = []
