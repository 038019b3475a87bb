"""The command line: ``anisotropy <command> ...``.

Commands: ``explore`` (statistics before variography), ``discover`` (the
continuity proposal for one domain), ``check`` (an interpretation held
against the data), ``batch`` (every domain), ``demo`` (the bundled
invented deposit end to end).

Exit codes: 0 success, 2 bad input (the message says what to fix),
1 internal error.

Each command lives in its own ``_cmd_<name>`` function with its own
``_add_<name>`` argument builder; shared option groups are built by the
``_add_*_options`` helpers so that every command spells them the same way.
"""

from __future__ import annotations

import argparse
import sys
import traceback

from anisotropy.errors import AnisotropyError, InputError

EXIT_OK = 0
EXIT_INTERNAL = 1
EXIT_BAD_INPUT = 2


# ---------------------------------------------------------------------------
# shared option groups
# ---------------------------------------------------------------------------

def _add_input_options(p: argparse.ArgumentParser, *, value_required: bool = True) -> None:
    """The sample-table options every data command takes."""
    p.add_argument("file", help="sample table: CSV (any common separator) or Parquet")
    g = p.add_argument_group("columns")
    g.add_argument("--value", required=value_required, metavar="COL",
                   help="grade column to study")
    g.add_argument("--x", metavar="COL", help="easting column (detected if omitted)")
    g.add_argument("--y", metavar="COL", help="northing column (detected if omitted)")
    g.add_argument("--z", metavar="COL", help="elevation column (detected if omitted)")
    g.add_argument("--domain", metavar="COL", help="domain column")
    g.add_argument("--domain-value", metavar="VALUE",
                   help="study only the samples of this domain")
    g.add_argument("--hole", metavar="COL",
                   help="hole or string identifier (enables down-hole spacing)")
    g = p.add_argument_group("assay codes and duplicates")
    g.add_argument("--missing-codes", choices=["missing", "keep"], default="missing",
                   help="values <= -90 (e.g. -99, -999): treat as missing (default) or keep")
    g.add_argument("--below-detection", choices=["half", "missing", "keep"], default="half",
                   help="other negative values (-DL codes): replace by DL/2 (default, "
                        "common practice), treat as missing, or keep")
    g.add_argument("--duplicates", choices=["keep", "average", "drop"], default="keep",
                   help="samples sharing a location: keep all (default), average them, "
                        "or drop all but the first")


def _add_output_option(p: argparse.ArgumentParser, default: str) -> None:
    p.add_argument("--out", metavar="DIR", default=default,
                   help=f"folder for the results (default: {default})")


def _read_samples_from_args(args):
    """Read and validate the sample table named on the command line."""
    from anisotropy.samples import read_samples

    return read_samples(
        args.file, value=args.value, x=args.x, y=args.y, z=args.z,
        domain=args.domain, domain_value=args.domain_value, hole=args.hole,
        missing_codes=args.missing_codes, below_detection=args.below_detection,
        duplicates=args.duplicates,
    )


# ---------------------------------------------------------------------------
# commands (each section owned by its issue)
# ---------------------------------------------------------------------------

# >>> explore
# <<< explore

# >>> discover
# <<< discover

# >>> check
# <<< check

# >>> batch
# <<< batch

# >>> demo
# <<< demo


# ---------------------------------------------------------------------------
# entry point
# ---------------------------------------------------------------------------

def _commands():
    """(name, help, add_arguments, run) for every command that exists so far."""
    found = []
    g = globals()
    for name in ("explore", "discover", "check", "batch", "demo"):
        add = g.get(f"_add_{name}")
        run = g.get(f"_cmd_{name}")
        if add is not None and run is not None:
            found.append((name, (run.__doc__ or "").strip().splitlines()[0], add, run))
    return found


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="anisotropy",
        description="Discover 3D grade-continuity anisotropy in domained sample data.",
    )
    from anisotropy import __version__
    parser.add_argument("--version", action="version", version=f"anisotropy {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, help_text, add, run in _commands():
        p = sub.add_parser(name, help=help_text, description=help_text)
        add(p)
        p.set_defaults(_run=run)
    return parser


def main(argv=None) -> int:
    """Run the command line; return the exit code."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if getattr(args, "_run", None) is None:
        parser.print_help()
        return EXIT_BAD_INPUT
    try:
        return int(args._run(args) or EXIT_OK)
    except InputError as exc:
        print(f"anisotropy {args.command}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except AnisotropyError as exc:
        print(f"anisotropy {args.command}: {exc}", file=sys.stderr)
        return EXIT_INTERNAL
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except Exception:  # noqa: BLE001 - last resort: say it is ours, not the user's
        traceback.print_exc()
        print(f"anisotropy {args.command}: internal error (the trace above is for the "
              "developers; please report it with the command you ran)", file=sys.stderr)
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
