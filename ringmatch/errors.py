"""The one error hierarchy of ringmatch.

`RingmatchError` is the base of every error the tool raises on purpose; the command line
catches it alone and prints its message as one line with exit status 2.  `InputError`
marks a problem with what the user gave (a case name, a presentation file, an option);
`ResourceError` marks work refused because it cannot finish within the stated limits.
Component modules derive their specific errors from these, so a caller of the Python API
can catch either level.
"""


class RingmatchError(Exception):
    """Any error ringmatch raises deliberately; its message is one self-contained line."""


class InputError(RingmatchError, ValueError):
    """Something the user supplied is malformed or impossible (names what and where)."""


class ResourceError(RingmatchError):
    """Work refused or stopped because it exceeds a stated size, time or memory limit."""


class UsageError(InputError):
    """A command-line request that cannot be run as given (an option, a combination of
    options).  Defined here rather than in the command line so that the modules the command
    line calls can raise it without importing the command line back."""
