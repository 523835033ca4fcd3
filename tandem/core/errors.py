"""The one exception type the library raises for bad input."""


class TandemInputError(ValueError):
    """Bad input from the user: the message is one line naming the field and the fix.

    The command line prints the message alone and exits with code 2.

    Examples
    --------
    >>> import tandem
    >>> tandem.detailed_balance_limit([-1.0], tandem.reference_spectrum().photon_flux())
    Traceback (most recent call last):
    ...
    tandem.core.errors.TandemInputError: gap -1 eV: a band gap must be a positive energy in eV
    """


class MissingExtra(TandemInputError):
    """An optional part of tandem that is not installed: the message names the extra
    (``pip install 'tandemcell[region]'``); passed on whole, never wrapped in a field's message."""
