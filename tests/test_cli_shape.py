"""One shape for every command (issue 9): the same option names for the same things,
``schema_version`` in every JSON document, and outputs written under one policy.

The expectations are this project's own interface contract (DESIGN.md, README);
the checks read click's own description of each command.
"""

from __future__ import annotations

import json
from pathlib import Path

import click
import pytest

from clashcheck.cli import main

REPO = Path(__file__).resolve().parent.parent
EXAMPLES = REPO / "examples"

#: What each shared concept is called on every command that has it: an option with
#: one of these flags carries all of them.
SHARED = (("--format",), ("-o", "--output"), ("--force",), ("--plot",), ("--fail-on",))
#: Spellings that would mean one of the shared concepts under another name.
FORBIDDEN = {"--fmt", "--out", "--json", "--image", "--figure", "--overwrite", "--fail", "--diagram"}


def _flags(command: click.Command) -> list[tuple[str, ...]]:
    return [tuple(p.opts) for p in command.params if isinstance(p, click.Option) and not p.hidden]


@pytest.mark.parametrize("name", sorted(main.commands))
def test_shared_options_have_one_spelling(name):
    options = _flags(main.commands[name])
    every = {flag for opts in options for flag in opts}
    assert not every & FORBIDDEN, f"{name}: {every & FORBIDDEN}"
    for opts in options:
        for shared in SHARED:
            if set(opts) & set(shared):
                assert set(shared) <= set(opts), f"{name}: {opts} should be {shared}"


@pytest.mark.parametrize("name", sorted(main.commands))
def test_every_command_has_format_output_and_force(name):
    every = {flag for opts in _flags(main.commands[name]) for flag in opts}
    if name != "plot":  # plot's one output is its figure (--plot)
        assert {"--format", "--output", "-o"} <= every, name
    else:
        assert "--plot" in every
    assert "--force" in every, f"{name} writes files but has no --force"


@pytest.mark.parametrize("args", [
    ["check", str(EXAMPLES / "freestyle-5in.toml")],
    ["catalog", "motors"],
    ["arm", str(EXAMPLES / "frame" / "kestrel-x5.toml")],
    ["compare", str(EXAMPLES / "freestyle-5in.toml"), str(EXAMPLES / "freestyle-5in-swap.toml")],
    ["pick", str(EXAMPLES / "ducted-3in.toml"), "--top", "1"],
    ["frame", str(EXAMPLES / "frame" / "kestrel-x5.toml")],
    ["modes", str(EXAMPLES / "recordings" / "tap-bolted.wav"), "--kind", "tap"],
], ids=lambda a: a[0])
def test_every_json_document_has_schema_version(runner, args):
    result = runner.invoke(main, [*args, "--format", "json"])
    assert result.exit_code in (0, 1), result.output
    assert json.loads(result.stdout)["schema_version"] >= 1


def test_plot_takes_its_figure_with_plot(runner, tmp_path):
    result = runner.invoke(main, ["plot", str(EXAMPLES / "freestyle-5in.toml")])
    assert result.exit_code == 2 and "--plot" in result.stderr


@pytest.mark.parametrize("name", sorted(main.commands))
def test_every_format_offers_table_and_json(name):
    for p in main.commands[name].params:
        if isinstance(p, click.Option) and "--format" in p.opts:
            assert {"table", "json"} <= set(p.type.choices), name


def test_catalog_kinds_are_the_command_choices():
    from clashcheck.inputs.catalog import KINDS

    kind = next(p for p in main.commands["catalog"].params if p.name == "kind")
    assert set(kind.type.choices) == set(KINDS)
