"""User-facing errors.

Every problem with a user's input is raised as :class:`InputError` with a
single line that names the file, row or field and says what is wrong.  The CLI
prints that line to stderr and exits with status 2 (no traceback unless
``--debug``).
"""

__all__ = ["InputError", "ConvergenceWarning"]


class InputError(ValueError):
    """A problem with user input, reported as one clear line."""

    def __init__(self, message, *, source=None, field=None):
        message = " ".join(str(message).split())  # always one line
        if source:
            message = f"{source}: {message}"
        super().__init__(message)
        self.source = source
        self.field = field


class ConvergenceWarning(UserWarning):
    """The MCMC sampler stopped at its cap before the convergence criterion."""
