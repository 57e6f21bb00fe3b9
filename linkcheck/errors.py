"""The one exception type for expected failures; only cli.py turns it into an exit code."""

from __future__ import annotations


class LinkcheckError(Exception):
    """An expected failure (bad input, bad configuration): the message is one line for the user."""


class ConfigError(LinkcheckError):
    """A configuration file or option is invalid: the message names the file, line and key."""
