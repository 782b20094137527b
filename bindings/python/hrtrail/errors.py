"""Library errors as Python exceptions.

Every failure reported by libhrtrail is raised as an HrtrailError (or one of
its subclasses) that carries the library's status code (``.code``, a
Status) and its specific message (``.message``, from struct hrt_error).
"""
import ctypes

from ._clib import HrtError, text
from .enums import Status


class HrtrailError(Exception):
    """An error reported by libhrtrail.

    Attributes:
      code     the Status code the C function returned
      message  the library's specific message (names the argument, dataset or index)
    """

    def __init__(self, code, message):
        try:
            code = Status(code)
        except ValueError:
            pass  # a code newer than this package: keep the number
        self.code = code
        self.message = message
        super().__init__(code, message)

    def __str__(self):
        name = self.code.name if isinstance(self.code, Status) else str(self.code)
        return "%s (HRT_E_%s, code %d)" % (self.message, name, int(self.code))


class OutsideGridError(HrtrailError, ValueError):
    """The star lies outside the grid: initial mass, metallicity or age out of range, or no track."""


class InvalidInputError(HrtrailError, ValueError):
    """An argument is NaN, infinite, of the wrong sign, or otherwise invalid."""


class GridFileError(HrtrailError):
    """The grid file cannot be found, opened or read, or is not a valid hrtrail grid."""


_CLASS = {
    Status.MASS_RANGE: OutsideGridError, Status.Z_RANGE: OutsideGridError,
    Status.AGE_RANGE: OutsideGridError, Status.NO_TRACK: OutsideGridError,
    Status.DOMAIN: InvalidInputError, Status.INVALID: InvalidInputError,
    Status.IO: GridFileError, Status.FORMAT: GridFileError, Status.VERSION: GridFileError,
    Status.NOT_FOUND: GridFileError,
}


def error_for(code, message):
    """The exception instance for a status code and message."""
    try:
        cls = _CLASS.get(Status(code), HrtrailError)
    except ValueError:
        cls = HrtrailError
    return cls(code, message)


def check(code, err=None, what=""):
    """Raise the matching HrtrailError if code is not HRT_OK.

    err is the HrtError the function filled (its message is used when set),
    what a prefix naming the call.
    """
    if code == 0:
        return
    msg = ""
    if isinstance(err, HrtError) and err.code == code:
        msg = err.message.decode("utf-8", errors="replace")
    if not msg:
        from ._clib import lib
        msg = text(lib.hrt_strerror(code))
    prefix = what + ": " if what and not msg.startswith(what.split("(")[0] + ":") else ""
    raise error_for(code, prefix + msg)


def new_error():
    """A zeroed struct hrt_error and the pointer to pass to the library."""
    e = HrtError()
    return e, ctypes.byref(e)
