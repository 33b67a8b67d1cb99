"""Exception types shared by every layer.

``TnarenaError`` is a user mistake (bad input): its message is one sentence
that names the bad value and the fix, and the command line prints it without
a traceback. ``PluginError`` is a broken plugin: it names the plugin and the
contract it broke.
"""


class TnarenaError(ValueError):
    """Bad input from a user: the message says what was wrong and how to fix it."""


class PluginError(RuntimeError):
    """A plugin broke the contract: the message names the plugin and what it broke."""
