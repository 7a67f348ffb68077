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
fail_on_violation_option = click.option("--fail-on-violation", is_flag=True,
                                        help="Exit with code 3 when any clearance violation is found.")


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


def finish(result, fail_on_violation: bool, per_span: bool = False) -> None:
    """Print the summary (unless quiet) and set the exit code."""
    from routesag.report import summary_text

    if not click.get_current_context().find_root().obj.get("quiet"):
        click.echo(summary_text(result, per_span=per_span))
    if fail_on_violation and len(result.layers["clearance_violations"]):
        raise click.exceptions.Exit(EXIT_VIOLATION)
