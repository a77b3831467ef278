"""The user guide is kept in step with the code: commands, options and config keys."""

from __future__ import annotations

import argparse
import re
from pathlib import Path

from orbitalrender.cli import build_parser
from orbitalrender.gallery.config import SCHEMA, TOP_KEYS
from orbitalrender.jobs import KINDS, options_of
from orbitalrender.jobs.option import expected_text, key_of

ROOT = Path(__file__).resolve().parent.parent
GUIDE = (ROOT / "docs" / "guide.md").read_text(encoding="utf-8")
_COMMAND_HEADING = re.compile(r"^### `orbitalrender ([a-z-]+)", re.MULTILINE)


def _subcommands() -> dict[str, argparse.ArgumentParser]:
    parser = build_parser()
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    raise AssertionError("the command line has no subcommands")


def _section(command: str) -> str:
    """The guide's text from the command's heading to the next heading of the same level or above."""
    m = re.search(rf"^### `orbitalrender {command}\b.*$", GUIDE, re.MULTILINE)
    assert m, f"docs/guide.md has no section '### `orbitalrender {command} ...`'"
    rest = GUIDE[m.end():]
    end = re.search(r"^#{1,3} ", rest, re.MULTILINE)
    return rest[:end.start()] if end else rest


def test_every_command_and_option_is_documented():
    for name, sub in _subcommands().items():
        text = _section(name)
        for action in sub._actions:
            for option in action.option_strings:
                if option in ("-h", "--help"):
                    continue
                assert re.search(rf"`{re.escape(option)}\b", text), \
                    f"option {option} of '{name}' is not documented in its section of docs/guide.md"


def test_every_documented_command_exists():
    documented = set(_COMMAND_HEADING.findall(GUIDE))
    assert documented == set(_subcommands()), "docs/guide.md and the command line list different commands"


def test_global_options_are_documented():
    for action in build_parser()._actions:
        for option in action.option_strings:
            if option not in ("-h", "--help"):
                assert f"`{option}`" in GUIDE, f"global option {option} missing from docs/guide.md"


def _config_reference() -> set[str]:
    m = re.search(r"^### Config reference.*?$(.*?)(?=^## )", GUIDE, re.MULTILINE | re.DOTALL)
    assert m, "docs/guide.md has no '### Config reference' section"
    return set(re.findall(r"^\| `([A-Za-z_0-9]+)` \|", m.group(1), re.MULTILINE))


def test_config_reference_lists_exactly_the_schema_keys():
    assert _config_reference() == set(SCHEMA) | set(TOP_KEYS)


def _config_rows() -> dict[str, str]:
    m = re.search(r"^### Config reference.*?$(.*?)(?=^## )", GUIDE, re.MULTILINE | re.DOTALL)
    return {mt[1]: mt[0] for mt in re.finditer(r"^\| `([A-Za-z_0-9]+)` \|.*$", m.group(1), re.MULTILINE)}


def test_config_reference_gives_the_ranges_and_values_of_the_jobs_definitions():
    rows = _config_rows()
    for cls in KINDS.values():
        for name, (opt, _) in options_of(cls).items():
            key = key_of(name, opt)
            if not key or key not in rows:
                continue
            row = rows[key]
            if opt.choices is not None:
                for choice in opt.choices:
                    assert f"`{choice}`" in row, (key, choice)
            elif opt.lo is not None and opt.hi is not None:
                interval = expected_text(opt).split(" in ", 1)[1]
                assert interval in row, (key, interval, row)


def test_every_flag_default_in_the_help_is_the_definitions_default():
    # the help text is generated from the definitions: "(default X)" shows the field's default
    for name, sub in _subcommands().items():
        help_text = " ".join(sub.format_help().split())
        for action in sub._actions:
            if action.option_strings and isinstance(action.default, float):
                assert f"(default {action.default:g}" in help_text, (name, action.dest)


def test_guide_links_to_the_other_documents_that_exist():
    for target in re.findall(r"\]\(([^)#:]+\.md)\)", GUIDE):
        assert (ROOT / "docs" / target).is_file(), f"docs/guide.md links to missing {target}"


def test_python_section_names_exist_in_the_package():
    import orbitalrender

    m = re.search(r"^## Python$(.*?)(?=^## )", GUIDE, re.MULTILINE | re.DOTALL)
    assert m, "docs/guide.md has no '## Python' section"
    table = [ln for ln in m.group(1).splitlines() if ln.startswith("| ") and "`" in ln]
    names = {n for ln in table for n in re.findall(r"`([A-Za-z_]+)`", ln)}
    assert names, "the Python section lists no functions"
    assert names <= set(orbitalrender.__all__), names - set(orbitalrender.__all__)
