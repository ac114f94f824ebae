"""Input a user can fix: :class:`Problem` (where and what to do) and :class:`PlanError`,
which carries every problem found. The one exception type of the engine and the
adapters; the command line prints its problems and exits with status 2."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["PlanError", "Problem"]


@dataclass
class Problem:
    """One thing wrong with the input: where it is and what to do."""

    where: str
    message: str

    def __str__(self) -> str:
        return f"{self.where}: {self.message}"


class PlanError(ValueError):
    """Input a user can fix. Carries one or more :class:`Problem` entries."""

    #: Whether the user can fix it in the input (the command's exit status 2); a save that
    #: failed (a full disk ...) is not the input's fault (status 1).
    input_fault: bool = True

    def __init__(self, problems: list[Problem] | Problem | str, where: str = "plan") -> None:
        if isinstance(problems, str):
            problems = [Problem(where, problems)]
        elif isinstance(problems, Problem):
            problems = [problems]
        self.problems: list[Problem] = list(problems)
        super().__init__("\n".join(str(p) for p in self.problems))
