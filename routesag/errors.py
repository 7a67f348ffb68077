"""One root error class for everything routesag raises on purpose.

The CLI maps :class:`InputError` (bad input or usage) to exit code 2 and any
other :class:`RoutesagError` to exit code 1.
"""


class RoutesagError(Exception):
    """Root of every error routesag raises deliberately."""


class InputError(RoutesagError, ValueError):
    """Bad input: a file, a field, a project setting. Exit code 2.

    Parameters
    ----------
    problems : str or list of str
        One message, or every problem found in one validation pass. Each
        message names the file, the feature and the field.
    """

    def __init__(self, problems):
        if isinstance(problems, str):
            problems = [problems]
        self.problems = list(problems)
        if len(self.problems) == 1:
            text = self.problems[0]
        else:
            text = f"{len(self.problems)} problems found:\n" + "\n".join(
                f"  - {p}" for p in self.problems)
        super().__init__(text)


class ProjectError(InputError):
    """The TOML project file is malformed or holds an invalid setting."""


class DataError(InputError):
    """An input dataset (structures, terrain) is unusable."""


class SolveError(InputError):
    """A physical problem has no solution for the inputs given (e.g. change of state)."""


class EngineError(InputError):
    """The engine for the tension sections cannot be set up: a bad worker count or scheduler address, or a
    cluster that cannot be reached."""


class PipelineError(RoutesagError):
    """Stages cannot be assembled into a valid chain (missing or clashing datasets)."""


class OutputError(RoutesagError):
    """The output file cannot be written where asked."""


#: Longest value echoed in a message [characters]; a longer one is cut in the middle.
MESSAGE_VALUE_CHARS = 200


def cut(text: str, limit: int = MESSAGE_VALUE_CHARS) -> str:
    """``text`` cut in the middle to at most about ``limit`` characters, saying how much was left out."""
    text = str(text)
    if len(text) <= limit:
        return text
    keep = limit // 2
    return f"{text[:keep]}...[{len(text) - 2 * keep} characters cut]...{text[-keep:]}"
