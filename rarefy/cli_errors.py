"""The command line's input error: one clear line on stderr and exit status 2."""

import click

__all__ = ["InputError", "fail", "parse_option"]


class InputError(click.ClickException):
    """Bad input: one clear line, exit status 2."""

    exit_code = 2

    def show(self, file=None):
        click.echo(f"error: {self.format_message()}", err=True)


def fail(message: str):
    """Raise :class:`InputError` with ``message``."""
    raise InputError(message)


def parse_option(value, kind: str, option: str):
    """A quantity given to ``option`` in SI units (None stays None); a bad value is one
    :class:`InputError` line naming the option (``rarefy.units`` kinds)."""
    from rarefy.units import UnitError, parse_quantity

    if value is None:
        return None
    try:
        return parse_quantity(value, kind)
    except UnitError as exc:
        raise InputError(f"{option}: {exc}") from None
