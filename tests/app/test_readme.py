"""The README's synopsis lists every command and option that exists, and only those."""

import argparse
import re
from pathlib import Path

from app.cli import build_parser

README = (Path(__file__).resolve().parents[2] / "README.md").read_text(encoding="utf-8")


def _subparsers(parser):
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return action.choices
    return {}


def test_every_command_and_option_is_in_the_readme():
    """A new option without a line in the README fails here (the README is the user's synopsis)."""
    missing = []
    for name, sub in _subparsers(build_parser()).items():
        if f"curvewright {name}" not in README:
            missing.append(name)
        for action in sub._actions:
            for flag in action.option_strings:
                if flag.startswith("--") and flag != "--help" and flag not in README:
                    missing.append(f"{name} {flag}")
    assert not missing, f"README lacks: {missing}"


def test_the_readme_names_no_option_that_does_not_exist():
    """Options quoted in the README exist in some subcommand (old names do not linger)."""
    known = {"--help", "--version", "--force", "--quick"}    # --quick: bench/bench_sweep.py's own
    for sub in _subparsers(build_parser()).values():
        for action in sub._actions:
            known.update(action.option_strings)
    quoted = set(re.findall(r"(?<![\w-])--[a-z][a-z-]+", README))
    assert quoted - known == set()
