"""The command line's input error: one clear line on stderr and exit status 2."""

import click

__all__ = ["InputError"]


class InputError(click.ClickException):
    """Bad input: one clear line, exit status 2."""

    exit_code = 2

    def show(self, file=None):
        click.echo(f"error: {self.format_message()}", err=True)
