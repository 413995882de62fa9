"""The ``mechfit`` command: a thin layer over the public API.

Each verb lives in a module of this package with ``NAME``, ``HELP``, ``add_arguments``
and ``run``; the modules are found by name, so a new verb needs no edit here. Exit
codes: 0 success, 1 the work failed, 2 bad input (the message names file, line or
field; no traceback).
"""

from __future__ import annotations

import argparse
import importlib
import pkgutil
import sys
from collections.abc import Sequence

from mechfit import __version__
from mechfit.errors import MechfitError

#: the order verbs are listed in ``mechfit --help``; others follow alphabetically
ORDER = ["demo", "check", "derive", "simulate", "fit", "rank", "report", "batch", "design"]


def _verbs():
    names = [m.name for m in pkgutil.iter_modules(__path__) if not m.name.startswith("_")]
    names.sort(key=lambda n: (ORDER.index(n) if n in ORDER else len(ORDER), n))
    return [importlib.import_module(f"{__name__}.{n}") for n in names]


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="mechfit",
        description="Test proposed reaction mechanisms against kinetic data.",
        epilog="Exit codes: 0 success, 1 the work failed, 2 bad input. "
               "Run 'mechfit VERB --help' for a verb's options and an example.",
    )
    parser.add_argument("--version", action="version", version=f"mechfit {__version__}")
    sub = parser.add_subparsers(dest="verb", metavar="VERB")
    for mod in _verbs():
        p = sub.add_parser(mod.NAME, help=mod.HELP, description=mod.HELP,
                           epilog=getattr(mod, "EXAMPLE", None),
                           formatter_class=argparse.RawDescriptionHelpFormatter)
        mod.add_arguments(p)
        p.set_defaults(_run=mod.run)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code (also used by the console script)."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "_run", None):
        parser.print_help()
        return 2
    try:
        return int(args._run(args) or 0)
    except MechfitError as err:
        print(f"mechfit {args.verb}: {err}" if "\n" not in str(err) else str(err),
              file=sys.stderr)
        return err.exit_code
    except KeyboardInterrupt:
        print("mechfit: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # output piped into 'head' and the like: stop quietly
        import os

        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
