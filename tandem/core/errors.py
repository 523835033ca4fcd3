"""The one exception type the library raises for bad input, and the one line a file-system
fault gives."""

import errno


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


#: File-system faults of writing (a full disk or quota, a read-only place, a file-size limit,
#: a closed pipe); any other (a name too long to look up, a folder not readable) is one of use
WRITE_FAULTS = {errno.ENOSPC, getattr(errno, "EDQUOT", errno.ENOSPC), errno.EROFS, errno.EFBIG,
                errno.EPIPE}


def os_error_line(exc: OSError) -> str:
    """The one line an OSError gives the user: what could not be done, where, and why."""
    verb = "cannot write" if exc.errno in WRITE_FAULTS else "cannot use"
    where = f" '{exc.filename}'" if getattr(exc, "filename", None) else ""
    return f"{verb}{where}: {exc.strerror or exc}"
