"""The one exception type the tool raises for a user's mistake."""


class BridgecalcError(Exception):
    """Bad input: a model, a parameter or an option the tool cannot accept.

    The message names what is wrong and where (file, table, key) so that a
    user can act on it. The command line prints it as ``error: ...`` and exits
    with code 2; anything else escaping is a bug in the tool.
    """


class ModelError(BridgecalcError):
    """A model file or in-memory model that breaks the rules of the format."""
