"""The one error a configuration problem raises."""

__all__ = ["ConfigError"]


class ConfigError(ValueError):
    """A configuration that cannot be used.

    The message reads ``"<file>: [section] key: problem"``; the commands print it as one line and
    exit with code 2.
    """
