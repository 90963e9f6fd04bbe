"""The one exception type a user's input can cause, with a message that says what to do."""

from __future__ import annotations


class SpikevarInputError(ValueError):
    """A problem with the user's data or configuration.

    The message always names where the problem is (session, file, row or column, whichever
    apply) and what to do about it, so it can be shown to the user as is, without a traceback.

    Parameters
    ----------
    problem
        What is wrong, in one sentence.
    fix
        What the user should do.
    session, path, where
        Optional context: the session id, the file concerned and the row/column location.
    """

    def __init__(
        self,
        problem: str,
        *,
        fix: str,
        session: str | None = None,
        path: str | None = None,
        where: str | None = None,
    ) -> None:
        self.problem = problem
        self.fix = fix
        self.session = session
        self.path = path
        self.where = where
        super().__init__(self._render())

    def _render(self) -> str:
        context = []
        if self.session is not None:
            context.append(f"session '{self.session}'")
        if self.path is not None:
            context.append(f"file {self.path}")
        if self.where is not None:
            context.append(self.where)
        head = f"[{'; '.join(context)}] " if context else ""
        return f"{head}{self.problem} Fix: {self.fix}"

    def with_context(self, *, session: str | None = None, path: str | None = None):
        """Return a copy with session/path filled in where they were missing."""
        return SpikevarInputError(
            self.problem,
            fix=self.fix,
            session=self.session if self.session is not None else session,
            path=self.path if self.path is not None else path,
            where=self.where,
        )


def is_disk_full(exc: BaseException) -> bool:
    """True for an out-of-space error, from the OS (errno) or from Arrow (message only)."""
    import errno

    if not isinstance(exc, OSError):
        return False
    return exc.errno in (errno.ENOSPC, errno.EDQUOT) or "No space left on device" in str(exc)


def disk_full_message(path) -> str:
    """The one sentence a user sees when an output could not be written for lack of space."""
    return f"no space left on device while writing {path}: free space and rerun"


class OutputSpaceError(OSError):
    """An output could not be written because the disk (or quota) is full; names the output."""

    def __init__(self, path) -> None:
        import errno

        super().__init__(errno.ENOSPC, disk_full_message(path))
        self.output_path = str(path)

    def __str__(self) -> str:
        return disk_full_message(self.output_path)
