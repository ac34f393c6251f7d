"""The error handler of every command: our errors become one message, never a traceback."""

from __future__ import annotations

import functools
from collections.abc import Callable
from typing import Any, TypeVar

import click

from geo_corrosion.errors import GeoCorrosionError

__all__ = ["errors_handler"]

F = TypeVar("F", bound=Callable[..., Any])


def errors_handler(f: F) -> F:
    """Turn our errors into one clear message and a non-zero exit, never a traceback."""

    @functools.wraps(f)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        import warnings

        from geo_corrosion.errors import GeoCorrosionWarning

        def show(message: Any, category: Any, *_a: Any, **_k: Any) -> None:
            click.echo(f"note: {message}", err=True)

        try:
            with warnings.catch_warnings():
                warnings.simplefilter("always", GeoCorrosionWarning)
                warnings.showwarning = show
                return f(*args, **kwargs)
        except (click.ClickException, click.exceptions.Exit, click.exceptions.Abort):
            raise
        except GeoCorrosionError as err:
            raise click.ClickException(str(err)) from err
        except KeyboardInterrupt:
            raise click.ClickException("interrupted; nothing was written") from None
        except Exception as err:  # noqa: BLE001 - last line of defence for users
            if click.get_current_context().find_root().params.get("debug"):
                raise
            raise click.ClickException(
                f"internal error: {type(err).__name__}: {err}\n"
                "Nothing was written. Re-run with --debug for the details and report it."
            ) from err

    return wrapper  # type: ignore[return-value]
