"""The one exception type the library raises for bad input."""


class TandemInputError(ValueError):
    """Bad input from the user: the message is one line naming the field and the fix.

    The command line prints the message alone and exits with code 2.
    """
