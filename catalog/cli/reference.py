"""The command-line reference (``docs/cli.md``): the ``--help`` of every command, generated."""
from __future__ import annotations

__all__ = ["cli_reference_markdown", "walk_commands"]

import click

#: Width of the help texts in the reference (independent of the terminal that generates it).
WIDTH = 100


def walk_commands(group: click.Group, ctx: click.Context):
    """(command words, command, its context) of ``group`` and every command below it, in name order."""
    yield tuple(ctx.command_path.split()[1:]), group, ctx
    for name in sorted(group.commands):
        cmd = group.commands[name]
        sub = click.Context(cmd, info_name=name, parent=ctx)
        if isinstance(cmd, click.Group):
            yield from walk_commands(cmd, sub)
        else:
            yield tuple(sub.command_path.split()[1:]), cmd, sub


def cli_reference_markdown() -> str:
    """Markdown with one section per command: its ``--help`` and the old option spellings it still reads."""
    from . import cli

    root = click.Context(cli, info_name="motorshelf",
                         **{**cli.context_settings, "terminal_width": WIDTH, "max_content_width": WIDTH})
    out = ["Every command calls the `Catalog` method of its name (`stock take` → `Catalog.stock_take`, "
           "`import` → `Catalog.import_`) with options named like its keyword arguments.", ""]
    for words, cmd, ctx in walk_commands(cli, root):
        out += [f"## `{' '.join(('motorshelf', *words))}`", "", "```text", cmd.get_help(ctx).rstrip(), "```", ""]
        renamed = getattr(cmd, "renamed", {})
        if renamed:
            spellings = ", ".join(f"`{old}` (now `{new}`)" for old, new in sorted(renamed.items()))
            out += [f"Old spellings still read, with a deprecation note on stderr: {spellings}.", ""]
    return "\n".join(out).rstrip()
