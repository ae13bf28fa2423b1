"""The ``drivekit`` command: start a project from a template, re-check notebooks, write reports, diff designs.

Commands::

    drivekit new TEMPLATE DIR          copy a template notebook and its design file into DIR
    drivekit new --list                list the templates
    drivekit check NOTEBOOK...         re-run notebooks; fail where a recorded result changed
    drivekit report NOTEBOOK -o FILE   write a static HTML calculation record that reads offline
    drivekit diff A.toml B.toml        what changed between two design files, in plain words

Exit codes:

* 0 -- done; for ``check`` every result agreed, for ``diff`` the designs are the same;
* 1 -- ``check``: a recorded result changed; ``diff``: the designs differ;
* 2 -- usage error or refused input (missing file, unknown template, a design file that cannot be read);
* 3 -- a notebook could not be checked (a cell failed on re-run, or it holds no record).
"""

from __future__ import annotations

import argparse
import shutil
import sys
from collections.abc import Sequence
from pathlib import Path
from typing import Any

__all__ = ["EXIT_CHANGED", "EXIT_NOT_CHECKED", "EXIT_OK", "EXIT_USAGE", "main", "template_folder"]

EXIT_OK = 0
EXIT_CHANGED = 1
EXIT_USAGE = 2
EXIT_NOT_CHECKED = 3

_EPILOG = """exit codes:
  0  done; check: every recorded result agreed; diff: the designs are the same
  1  check: a recorded result changed; diff: the designs differ
  2  usage error or refused input (missing file, unknown template, unreadable design file)
  3  a notebook could not be checked (a cell failed on re-run, or it holds no record)
"""


def template_folder() -> Path:
    """The folder of template notebooks (``notebooks/`` of the drivekit source tree)."""
    return Path(__file__).resolve().parents[2] / "notebooks"


def templates() -> dict[str, Path]:
    """Template notebooks by name."""
    folder = template_folder()
    return {p.stem: p for p in sorted(folder.glob("*.ipynb"))} if folder.is_dir() else {}


def _cmd_new(args: argparse.Namespace) -> int:
    found = templates()
    if args.list or args.template is None:
        if not found:
            print(f"no templates found in {template_folder()}")
        for name, path in found.items():
            design = " + " + path.with_suffix(".toml").name if path.with_suffix(".toml").exists() else ""
            print(f"{name:24s} {path.name}{design}")
        return EXIT_OK if args.list else EXIT_USAGE
    if args.template not in found:
        names = ", ".join(found) or "none"
        print(f"drivekit new: unknown template {args.template!r}; templates here: {names}", file=sys.stderr)
        return EXIT_USAGE
    if args.dir is None:
        print(
            "drivekit new: give the project folder to create, e.g. drivekit new pump_flow_loop FIC-201", file=sys.stderr
        )
        return EXIT_USAGE
    src = found[args.template]
    dest = Path(args.dir)
    files = [src] + [p for p in (src.with_suffix(".toml"),) if p.exists()]
    clashes = [dest / f.name for f in files if (dest / f.name).exists()]
    if clashes:
        print(f"drivekit new: {clashes[0]} exists already; nothing copied", file=sys.stderr)
        return EXIT_USAGE
    dest.mkdir(parents=True, exist_ok=True)
    for f in files:
        shutil.copy2(f, dest / f.name)
        print(f"created {dest / f.name}")
    return EXIT_OK


def _cmd_check(args: argparse.Namespace) -> int:
    from .check import check_notebook

    missing = [n for n in args.notebooks if not Path(n).is_file()]
    if missing:
        print(f"drivekit check: no such notebook: {missing[0]}", file=sys.stderr)
        return EXIT_USAGE
    worst = EXIT_OK
    for n in args.notebooks:
        result = check_notebook(n, rtol=args.rtol, atol=args.atol, timeout=args.timeout)
        print(result.text)
        if result.error is not None:
            worst = max(worst, EXIT_NOT_CHECKED)
        elif result.changes:
            worst = max(worst, EXIT_CHANGED)
    return worst


def _cmd_report(args: argparse.Namespace) -> int:
    from .report import write_report

    if not Path(args.notebook).is_file():
        print(f"drivekit report: no such notebook: {args.notebook}", file=sys.stderr)
        return EXIT_USAGE
    out = write_report(args.notebook, args.output, execute=args.execute, timeout=args.timeout)
    print(f"wrote {out}")
    return EXIT_OK


def _cmd_diff(args: argparse.Namespace) -> int:
    from .designfile import DesignFileError, load_design
    from .diff import diff_designs

    try:
        a, b = load_design(args.a), load_design(args.b)
    except (DesignFileError, OSError) as exc:
        print(f"drivekit diff: {exc}", file=sys.stderr)
        return EXIT_USAGE
    d = diff_designs(a, b, rtol=args.rtol)
    print(d.text)
    return EXIT_OK if d.same else EXIT_CHANGED


def _command(sub: Any, name: str, text: str) -> argparse.ArgumentParser:
    """One subcommand, with the exit codes in its help like the main command."""
    return sub.add_parser(name, help=text, epilog=_EPILOG, formatter_class=argparse.RawDescriptionHelpFormatter)


def parser() -> argparse.ArgumentParser:
    """The argument parser of the ``drivekit`` command."""
    p = argparse.ArgumentParser(
        prog="drivekit",
        description="Calculation records for drive and loop designs: start a project, re-check notebooks, "
        "write static reports, compare design files.",
        epilog=_EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    new = _command(sub, "new", "copy a template notebook and its design file into a new project folder")
    new.add_argument("template", nargs="?", help="template name (see --list)")
    new.add_argument("dir", nargs="?", help="project folder to create (or fill)")
    new.add_argument("--list", action="store_true", help="list the templates and exit")
    new.set_defaults(run=_cmd_new)

    check = _command(sub, "check", "re-run notebooks in a temporary copy and compare their recorded results")
    check.add_argument("notebooks", nargs="+", metavar="NOTEBOOK", help="notebooks (.ipynb) with record() output")
    check.add_argument("--rtol", type=float, default=1e-6, help="relative tolerance of a result (default 1e-6)")
    check.add_argument("--atol", type=float, default=1e-9, help="absolute tolerance for results near 0 (default 1e-9)")
    check.add_argument("--timeout", type=float, default=600.0, help="longest time per cell in s (default 600)")
    check.set_defaults(run=_cmd_check)

    report = _command(sub, "report", "write a static HTML calculation record that reads offline")
    report.add_argument("notebook", metavar="NOTEBOOK")
    report.add_argument("-o", "--output", required=True, metavar="FILE.html", help="the HTML file to write")
    report.add_argument("--execute", action="store_true", help="re-run the notebook (in a copy) first")
    report.add_argument("--timeout", type=float, default=600.0, help="longest time per cell in s when executing")
    report.set_defaults(run=_cmd_report)

    diff = _command(sub, "diff", "what changed between two design files, inputs and results")
    diff.add_argument("a", metavar="A.toml")
    diff.add_argument("b", metavar="B.toml")
    diff.add_argument("--rtol", type=float, default=1e-9, help="relative change counted as a difference")
    diff.set_defaults(run=_cmd_diff)
    return p


def main(argv: Sequence[str] | None = None) -> int:
    """Run the ``drivekit`` command; returns the exit code (see the module notes)."""
    p = parser()
    args = p.parse_args(argv)
    if args.command is None:
        p.print_help()
        return EXIT_USAGE
    return int(args.run(args))


if __name__ == "__main__":
    sys.exit(main())
