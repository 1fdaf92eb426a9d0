"""The one exception type for problems the user can fix (bad files, bad scenario values)."""


class PlannerError(Exception):
    """A user-facing error: the message names the file, row or key and what is wrong.

    The CLI prints it as one line and exits with status 2; library callers can catch it.
    """
