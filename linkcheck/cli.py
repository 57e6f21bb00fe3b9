"""Command line: parse arguments, run, pick a reporter, map outcomes to exit codes. Thin by design.

Exit codes: 0 nothing at or above --fail-on; 1 findings at or above it, or
files changed (or, with --diff, that would change); 2 usage error,
unreadable input or xml-malformed, always with a one-line message.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

TYPE_CHECKING = False  # not typing.TYPE_CHECKING: importing typing costs ~3 ms of every run
if TYPE_CHECKING:
    from typing import Any

from linkcheck import __version__
from linkcheck.errors import LinkcheckError
from linkcheck.paths import MESH_SUFFIXES, display_path
from linkcheck.severity import FAIL_LEVELS, RANK


class _HelpFormatter(argparse.HelpFormatter):
    """argparse's formatter, measuring the terminal as shutil.get_terminal_size does (COLUMNS, then
    the terminal, else 80) without importing shutil and its compression modules (~3 ms of every run)."""

    def __init__(self, prog: str) -> None:
        try:
            columns = int(os.environ["COLUMNS"])
        except (KeyError, ValueError):
            try:
                columns = os.get_terminal_size(sys.__stdout__.fileno()).columns  # type: ignore[union-attr]
            except (AttributeError, ValueError, OSError):
                columns = 80
        super().__init__(prog, width=max(columns - 2, 20))


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="linkcheck",
        formatter_class=_HelpFormatter,
        description="Check (and fix) the inertial blocks of URDF and SDFormat robot descriptions "
        "against a uniform-density estimate from their geometry.",
    )
    p.add_argument("paths", nargs="*", type=Path, metavar="PATH",
                   help="description files or folders (searched for .urdf, .sdf, .world); mesh files "
                   "select the descriptions that use them")
    p.add_argument("--format", choices=("text", "json", "sarif", "github"), default="text", help="report format (default: text)")
    p.add_argument("--fail-on", choices=tuple(FAIL_LEVELS), help="lowest severity that makes the exit code 1 (default: warning)")
    p.add_argument("--select", action="append", metavar="RULES", help="only these rules (comma-separated)")
    p.add_argument("--ignore", action="append", metavar="RULES", help="skip these rules (comma-separated)")
    p.add_argument("-q", "--quiet", action="store_true", help="no infos, no summary")
    p.add_argument("--color", choices=("auto", "always", "never"), default="auto", help="colour the text report (default: auto)")
    fix = p.add_argument_group("fixing")
    fix.add_argument("--fix", action="store_true", help="repair impossible or clearly wrong blocks (keeps the stated mass)")
    fix.add_argument("--recompute", action="store_true", help="also replace blocks that are merely far from the estimate (implies --fix)")
    fix.add_argument("--fill-missing", action="store_true", help="add blocks to links with geometry and none (implies --fix)")
    fix.add_argument("--diff", action="store_true", help="show the pending change as a diff and write nothing (alone: --fix --diff)")
    fix.add_argument("--density", type=float, metavar="KG_M3", help="density for --fill-missing and for links whose mass is not positive")
    fix.add_argument("--keep-frame", action="store_true", help="write the tensor in the block's own rotated frame instead of link axes")
    where = p.add_argument_group("finding files")
    where.add_argument("--config", type=Path, metavar="FILE", help="use this linkcheck.toml or pyproject.toml instead of searching")
    where.add_argument("--package-path", action="append", default=[], metavar="NAME=DIR", help="where package://NAME/ points (repeatable)")
    where.add_argument("--no-cache", action="store_true", help="do not read or write the caches (mesh results, whole-file results)")
    p.add_argument("--version", action="version", version=f"linkcheck {__version__}")
    return p


def _rules(values: list[str] | None) -> tuple[str, ...]:
    return tuple(r.strip() for v in values or [] for r in v.split(",") if r.strip())


def _cli_settings(args: argparse.Namespace) -> dict[str, Any]:
    cli: dict[str, Any] = {}
    if args.fail_on:
        cli["fail_on"] = args.fail_on
    for key in ("select", "ignore"):
        rules = _rules(getattr(args, key))
        if not rules:
            continue
        from linkcheck.rules import unknown_rules

        unknown = unknown_rules(rules)
        if unknown:
            raise LinkcheckError(f"--{key}: unknown rule {', '.join(repr(u) for u in unknown)} (see the README's rule table)")
        cli[key] = rules
    if args.density is not None:
        if not args.density > 0:
            raise LinkcheckError(f"--density: must be a positive number of kg/m³, got {args.density}")
        cli["default_density"] = args.density
    packages = {}
    for item in args.package_path:
        name, sep, folder = item.partition("=")
        if not sep or not name or not folder:
            raise LinkcheckError(f"--package-path: expected NAME=DIR, got {item!r}")
        packages[name] = str(Path(folder).resolve())
    if packages:
        cli["package_paths"] = packages
    return cli


def _use_color(choice: str, stream: Any) -> bool:
    if choice != "auto":
        return choice == "always"
    if os.environ.get("NO_COLOR") or os.environ.get("TERM") == "dumb":
        return False
    return bool(getattr(stream, "isatty", lambda: False)())


def main(argv: list[str] | None = None) -> int:
    try:
        return _main(argv)
    except LinkcheckError as exc:
        print(f"linkcheck: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("linkcheck: interrupted", file=sys.stderr)
        return 2
    except BrokenPipeError:  # the reader of our output went away (| head): stop quietly
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 1
    except Exception as exc:  # noqa: BLE001 - a user never sees a traceback
        if os.environ.get("LINKCHECK_DEBUG"):
            raise
        print(f"linkcheck: internal error: {type(exc).__name__}: {exc} (set LINKCHECK_DEBUG=1 for details)", file=sys.stderr)
        return 2


def _main(argv: list[str] | None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not args.paths:
        parser.print_usage(sys.stderr)
        print("linkcheck: error: give at least one file or folder", file=sys.stderr)
        return 2
    if args.diff or args.recompute or args.fill_missing:
        args.fix = True
    from linkcheck.session import Session

    session = Session(cli=_cli_settings(args), config=args.config, no_cache=args.no_cache,
                      fix=_fix_options(args) if args.fix else None)
    results, problems = session.run(args.paths, MESH_SUFFIXES)
    return _report(args, results, problems)


def _fix_options(args: argparse.Namespace) -> Any:
    from linkcheck.fix import FixOptions

    return FixOptions(fix=True, recompute=args.recompute, fill_missing=args.fill_missing,
                      density=args.density, keep_frame=args.keep_frame)


def _report(args: argparse.Namespace, results: list[Any], problems: list[str]) -> int:
    from linkcheck.report.json import build_report

    out = sys.stdout
    changed = [r for r in results if r.changed]
    if args.fix and not args.diff:
        from linkcheck.writeback import write_atomic

        for r in changed:
            write_atomic(r.path, r.new_data)
        if args.format != "text" and any(r.estimated for r in changed):
            from linkcheck.report.diff import CAUTION

            print(f"linkcheck: caution: {CAUTION}", file=sys.stderr)  # machine output stays parseable
    shown = [r.unwritten() for r in results] if args.diff else results  # nothing written: report the file on disk
    entries = [r.report_entry(display_path(r.path)) for r in shown]
    report = build_report(entries, changed=len(changed))
    fatal = any(r.fatal for r in results)
    for e in entries:
        for f in e["findings"]:
            if f["rule"] == "xml-malformed" and f["severity"] == "error":
                print(f"linkcheck: {e['path']}:{f['line'] or 1}: {f['message']}", file=sys.stderr)
    for message in problems:
        print(f"linkcheck: {message}", file=sys.stderr)
    color = _use_color(args.color, out)
    if args.format == "json":
        from linkcheck.report.json import render_json

        out.write(render_json(report))
    elif args.format == "sarif":
        from linkcheck.report.sarif import render_sarif

        out.write(render_sarif(report))
    elif args.format == "github":
        from linkcheck.report.github import render_github

        out.write(render_github(report))
    else:
        if args.fix:
            _print_fixes(out, results, args.diff, color)
        from linkcheck.report.text import render_text

        render_text(report, out, color, args.quiet, pending=args.diff)
    out.flush()
    if fatal or problems:
        return 2
    if changed:
        return 1
    return 1 if any(_fails(r, e) for r, e in zip(results, entries)) else 0


def _fails(result: Any, entry: dict[str, Any]) -> bool:
    """A file fails at its own fail-on level (its configuration, or the command line's)."""
    level = FAIL_LEVELS[result.fail_on]
    worst = min((RANK[f["severity"]] for f in entry["findings"]), default=99)
    return level >= 0 and worst <= level


def _print_fixes(out: Any, results: list[Any], diff: bool, color: bool) -> None:
    from linkcheck.report.diff import CAUTION, print_diff, unified_diff

    estimated = False
    for r in results:
        if r.changed:
            if diff:
                print_diff(unified_diff(display_path(r.path), r.document.data, r.new_data), out, color)
            else:
                for line in r.fix_lines:
                    out.write(f"fixed {display_path(r.path)}: {line}\n")
            estimated = estimated or r.estimated
        for line in r.refusals:
            out.write(line + "\n")
    if estimated:
        out.write(f"\ncaution: {CAUTION}\n\n")
