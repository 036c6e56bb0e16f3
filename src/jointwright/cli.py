"""The ``jointwright`` command: verbs new, check, assess, size, frontier, study, report.

Each verb lives in ``jointwright.commands.<verb>`` and is imported only when used, so start-up
stays fast. Bad input ends with one line naming file, field and rule, and exit code 2.
"""

from __future__ import annotations

import importlib
import sys

import click

from .errors import InputError, did_you_mean

VERBS = {
    "new": "write a bundled example project into a folder",
    "check": "validate a project and summarize robot, catalog, cases and requirements",
    "assess": "every metric of a given design, per case and per power-flow mode",
    "size": "choose motor, stages and ratio for every joint (proven optimum)",
    "frontier": "payload versus back-drivability frontier",
    "study": "run a trade study (many cases) into a SQLite file",
    "report": "write the HTML report of a sizing, frontier or study",
}


class _Verbs(click.Group):
    def list_commands(self, ctx):
        return list(VERBS)

    def get_command(self, ctx, name):
        if name not in VERBS:
            return None
        return importlib.import_module(f"jointwright.commands.{name}").command

    def resolve_command(self, ctx, args):
        name = args[0] if args else None
        if name is not None and name not in VERBS and not name.startswith("-"):
            raise click.UsageError(f"No such command '{name}'{did_you_mean(name, VERBS)}.", ctx)
        return super().resolve_command(ctx, args)

    def invoke(self, ctx):
        try:
            return super().invoke(ctx)
        except InputError as exc:
            click.echo(f"jointwright: error: {exc}", err=True)
            ctx.exit(2)
        except click.UsageError as exc:
            # a mistyped option, choice or verb: one line too, with where to read the options
            where = exc.ctx.command_path if exc.ctx is not None else "jointwright"
            message = " ".join(exc.format_message().split())
            click.echo(
                f"jointwright: error: <command line>: {message} (see {where} --help)", err=True
            )
            ctx.exit(2)
        except KeyboardInterrupt:
            click.echo("jointwright: interrupted", err=True)
            ctx.exit(130)

    def format_commands(self, ctx, formatter):
        # the one-line help comes from VERBS, so --help imports no verb module
        with formatter.section("Commands"):
            formatter.write_dl(list(VERBS.items()))


@click.group(cls=_Verbs, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="jointwright")
def main():
    """Size every actuator of a robot at once: motor, gear stages and ratio per joint.

    Concept-stage aid: verify selections against supplier data and by test, and apply the
    applicable safety standards (self-locking and high-ratio joints can trap or crush).
    """


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
