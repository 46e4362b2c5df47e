"""Sphinx directives of our own that write pages from the code, so the pages cannot drift:

``.. librate-cli::``
    every ``librate`` command, its options grouped as ``--help`` groups them (from the argparse
    parsers of ``cli/commands/*.py``, built the way ``librate`` builds them);
``.. librate-scenario-schema::``
    the scenario file's tables and keys, types, required keys (from
    :data:`cr3bp.scenario.schema.SCHEMA`);
``.. librate-caution::``
    the caution of each model (from :mod:`cr3bp.cautions`).

Each renders reStructuredText and hands it to the parser, so it obeys ``-W`` like any page.
"""

from __future__ import annotations

import argparse

from docutils.parsers.rst import Directive
from docutils.statemachine import StringList
from docutils import nodes


def _cell(text) -> str:
    """Text for a list-table cell: one line, no reST markup surprises."""
    t = " ".join(str(text).split())
    for ch in ("*", "`", "|", "_"):
        t = t.replace(ch, "\\" + ch)
    return t or "\\ "


def _literal(text) -> str:
    return f"``{text}``" if text else "\\ "


class _RstDirective(Directive):
    has_content = False

    def lines(self) -> list[str]:
        raise NotImplementedError

    def run(self):
        node = nodes.section() if self.sectioned else nodes.container()
        node.document = self.state.document
        from sphinx.util.nodes import nested_parse_with_titles
        nested_parse_with_titles(self.state, StringList(self.lines(), source="<librate-docs>"), node)
        return node.children

    sectioned = True


def option_rows(parser: argparse.ArgumentParser):
    """[(group title, [(option, value name, help with default)])] of one command's parser."""
    groups = []
    for g in parser._action_groups:                       # the groups --help prints, in order
        rows = []
        for a in g._group_actions:
            if isinstance(a, argparse._HelpAction) or a.help == argparse.SUPPRESS:
                continue
            names = ", ".join(a.option_strings) if a.option_strings else a.dest.upper()
            meta = a.metavar or ("{" + ",".join(map(str, a.choices)) + "}" if a.choices else "")
            if a.nargs == 0:
                meta = ""
            text = a.help or ""
            if "%" in text:                                   # argparse's own expansion
                try:
                    text = text % {"default": a.default, "prog": parser.prog, "dest": a.dest}
                except (KeyError, TypeError, ValueError):
                    pass
            if a.required:
                text += " (required)"
            rows.append((names, meta if isinstance(meta, str) else str(meta), text))
        if rows:
            groups.append((g.title, rows))
    return groups


def _parser_lines(p, title, help_text, example=None, mark="-"):
    out = [title, mark * len(title), "", _cell(help_text) + ".", "", "Usage::", ""]
    usage = p.format_usage().replace("usage: ", "").strip()
    out += ["   " + line for line in usage.splitlines()] + [""]
    if example:
        out += ["Example::", "", "   " + example, ""]
    for gtitle, rows in option_rows(p):
        out += [f".. list-table:: {_cell(gtitle)}", "   :header-rows: 1", "   :widths: 25 20 55", "",
                "   * - option", "     - value", "     - meaning"]
        for names, meta, text in rows:
            out += [f"   * - {_literal(names)}", f"     - {_literal(meta)}", f"     - {_cell(text)}"]
        out.append("")
    for a in p._actions:                      # actions with their own options (librate catalog list ...)
        if isinstance(a, argparse._SubParsersAction):
            helps = {c.dest: c.help for c in a._choices_actions}
            for name, sp in a.choices.items():
                out += _parser_lines(sp, f"{title} {name}", helps.get(name) or name, mark="^")
    return out


def command_lines(mod) -> list[str]:
    """The reference of one command module: usage, example, its options by group, its actions."""
    from librate_cli.main import build_parser
    parser = build_parser(mod)
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return _parser_lines(sub.choices[mod.NAME], f"librate {mod.NAME}", mod.HELP, mod.EXAMPLE)


class CliDirective(_RstDirective):
    """Every command of ``librate``, in the order of the guide a bare ``librate`` prints."""

    def lines(self):
        from librate_cli.commands import modules
        from librate_cli.main import EXIT_CODES
        out = ["Exit status (every command)::", ""]
        out += ["   " + line for line in EXIT_CODES.splitlines()] + [""]
        for mod in modules():
            out += command_lines(mod)
        return out


def _type_text(t) -> str:
    if t.startswith("one-of:"):
        return "one of " + ", ".join(f"``{v}``" for v in t[len("one-of:"):].split("|") if v)
    return {"str": "text", "float": "number", "int": "whole number", "bool": "true / false",
            "quantity": "text with a unit (``\"200km\"``, ``\"6.5d\"``)", "table": "table",
            "list[str]": "list of text"}.get(t, t)


class SchemaDirective(_RstDirective):
    """The scenario tables and keys from :data:`cr3bp.scenario.schema.SCHEMA`."""

    def lines(self):
        from cr3bp.scenario import schema
        shape = {"table": "[{name}]", "table-of-tables": "[{name}.NAME]", "list-of-tables": "[[{name}]]"}
        out = []
        for name, (kind, required, keys) in schema.SCHEMA.items():
            head = shape[kind].format(name=name)
            out += [head, "^" * len(head), "",
                    f"{'Required' if required else 'Optional'} table ({kind.replace('-', ' ')}).", ""]
            out += self._table(keys)
            if name == "orbits":
                out += ["Constraints: ``[orbits.NAME.checks]``", "", *self._table(schema.CHECK_KEYS)]
        out += ["Refused keys", "^^^^^^^^^^^^", "",
                "Keys of earlier versions that are refused with their reason rather than ignored:", ""]
        for k, why in {**schema.RENAMED_CHECKS, **schema.UNUSED_SETTINGS}.items():
            out += [f"- ``{k}``: {_cell(why)}"]
        out += ["", f"Names of orbits and transfers: {_cell(schema.NAME_RULE)}. Export file names: "
                f"{_cell(schema.FILE_RULE)}. A scenario file is at most {schema.MAX_SCENARIO_BYTES} bytes; "
                f"a text value at most {schema.MAX_TEXT_CHARS} characters.", ""]
        return out

    @staticmethod
    def _table(keys):
        out = [".. list-table::", "   :header-rows: 1", "   :widths: 22 30 10 38", "",
               "   * - key", "     - type", "     - required", "     - meaning"]
        for k, (t, req, text) in keys.items():
            out += [f"   * - ``{k}``", f"     - {_type_text(t)}", f"     - {'yes' if req else 'no'}",
                    f"     - {_cell(text)}"]
        return out + [""]


class CautionDirective(_RstDirective):
    """The caution every output carries, for each model (:func:`cr3bp.cautions.caution`)."""

    sectioned = False

    def lines(self):
        from cr3bp import cautions
        out = []
        for key in cautions.MODELS:
            out += [f"``{key}``", "", "   " + _cell(cautions.caution(key)), ""]
        return out


def setup(app):
    app.add_directive("librate-cli", CliDirective)
    app.add_directive("librate-scenario-schema", SchemaDirective)
    app.add_directive("librate-caution", CautionDirective)
    return {"version": "1", "parallel_read_safe": True, "parallel_write_safe": True}
