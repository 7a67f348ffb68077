"""Options and error handling shared by the commands."""
from __future__ import annotations

import functools
import logging
import sys
import traceback
import warnings

import click

from routesag.errors import InputError, OutputError, PipelineError, RoutesagError, cut

EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 1
EXIT_VIOLATION = 3
#: Longest message line printed [characters].
MESSAGE_LINE_CHARS = 1000

out_option = click.option("-o", "--out", type=click.Path(dir_okay=False), default=None,
                          help="Output GeoPackage (overrides [output] path).")
all_violations_option = click.option("--all", "all_violations", is_flag=True,
                                     help="List every violation in the summary (default: the 20 worst).")
units_option = click.option("--units", type=click.Choice(["si", "imperial"]), default=None,
                            help="imperial: feet, pounds-force and degrees F beside SI in the summary "
                                 "(default [report] units; files stay SI).")
fail_on_violation_option = click.option("--fail-on-violation", is_flag=True,
                                        help="Exit with code 3 when any clearance violation is found.")

workers_option = click.option("--workers", type=click.IntRange(min=1), default=None, metavar="N",
                              help="Worker processes for the tension sections (1: in this process). "
                                   "Default: [engine] workers, else one per core.")
scheduler_option = click.option("--scheduler", default=None, metavar="ADDRESS",
                                help="Run the sections on a dask cluster: tcp://HOST:PORT, or local:N to start "
                                     "N local workers. Default: [engine] scheduler.")


class CommandError(click.ClickException):
    """A library error shown as one clean message with its exit code."""

    def __init__(self, message: str, exit_code: int):
        # A value pasted by mistake (a 100 MB path) must not flood the terminal: cut each long line.
        super().__init__("\n".join(cut(line, MESSAGE_LINE_CHARS) for line in message.splitlines()))
        self.exit_code = exit_code


def exit_code_for(exc: RoutesagError) -> int:
    return EXIT_BAD_INPUT if isinstance(exc, (InputError, OutputError, PipelineError)) else EXIT_INTERNAL


def handle_errors(func):
    """Turn library errors into clean messages and exit codes; never a traceback for bad input."""
    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        try:
            with warnings.catch_warnings():
                if not logging.getLogger().isEnabledFor(logging.DEBUG):
                    # numpy's overflow notes on absurd input print source lines before the clear error; -vv shows them
                    warnings.simplefilter("ignore", RuntimeWarning)
                return func(*args, **kwargs)
        except RoutesagError as exc:
            raise CommandError(str(exc), exit_code_for(exc)) from None
        except (click.ClickException, click.exceptions.Exit, click.Abort, KeyboardInterrupt):
            raise
        except BrokenPipeError:
            # Output piped into a reader that stopped early (`| head`): not an error of the run.
            sys.stderr.close()
            raise click.exceptions.Exit(0) from None
        except Exception as exc:
            if logging.getLogger().isEnabledFor(logging.DEBUG):
                traceback.print_exc()
            raise CommandError(f"internal error: {type(exc).__name__}: {exc} (run with -vv for the traceback)",
                               EXIT_INTERNAL) from None
    return wrapper


def is_quiet() -> bool:
    """Whether -q was given (before or after the command)."""
    return bool((click.get_current_context().find_root().obj or {}).get("quiet"))


def finish(result, fail_on_violation: bool, per_span: bool = False, all_violations: bool = False,
           units: str | None = None) -> None:
    """Print the summary (unless quiet) and set the exit code."""
    from routesag.report import MAX_LISTED_VIOLATIONS, summary_text

    if not is_quiet():
        click.echo(summary_text(result, per_span=per_span,
                                max_violations=None if all_violations else MAX_LISTED_VIOLATIONS, units=units))
    if fail_on_violation and len(result.layers["clearance_violations"]):
        raise click.exceptions.Exit(EXIT_VIOLATION)
