"""Command line: ``calcdoc build | new | schema | solve | check | diff | verify``.

Each command is a few lines in :mod:`calcdoc.commands`; this module only
parses arguments and maps errors to exit status (0 done, 1 a check or
verification failed, 2 bad input).  Heavy libraries are imported inside
the commands, so ``calcdoc --help`` is quick.
"""

from __future__ import annotations

import argparse
import gc
import importlib
import sys
from collections.abc import Sequence

from calcdoc import __version__

EXIT_OK, EXIT_FAIL, EXIT_INPUT = 0, 1, 2
EXIT_INTERRUPTED = 130  # 128 + SIGINT, as shells report a command stopped by Ctrl-C
RESULT_LIBRARIES = ("numpy", "scipy", "sympy", "reportlab")  # the libraries that shape results


def version_text() -> str:
    """calcdoc's version, then those of the libraries that shape the results."""
    import platform
    from importlib import metadata

    libs = []
    for lib in RESULT_LIBRARIES:
        try:
            libs.append(f"{lib} {metadata.version(lib)}")
        except metadata.PackageNotFoundError:
            libs.append(f"{lib} not installed")
    return f"calcdoc {__version__}\n{', '.join(libs)}; Python {platform.python_version()}"


class _VersionAction(argparse.Action):
    """``--version``: looks the library versions up only when asked."""

    def __init__(self, option_strings, dest=argparse.SUPPRESS, help=None):  # noqa: A002
        super().__init__(option_strings, dest, nargs=0, default=argparse.SUPPRESS, help=help)

    def __call__(self, parser, namespace, values, option_string=None):
        sys.stdout.write(version_text() + "\n")
        parser.exit()


def parser() -> argparse.ArgumentParser:
    ap = argparse.ArgumentParser(
        prog="calcdoc",
        description="Calculation records for linear DC circuits, from one TOML project file.",
        epilog="Exit status: 0 done, 1 a check or verification failed, 2 bad input.",
    )
    ap.add_argument(
        "--version",
        action=_VersionAction,
        help="show the version of calcdoc and of the libraries that shape the results",
    )
    sub = ap.add_subparsers(dest="command", metavar="COMMAND", required=True)

    b = sub.add_parser(
        "build",
        help="write the PDF calculation package (or a set of them, with a register)",
        description="Write the calculation package of a project file. Given several project "
        "files or a folder (its *.toml files), build every record in parallel, each package at "
        "its default name beside its project, and write register.pdf and register.csv into the "
        "folder (the current folder for a list of files).",
    )
    b.add_argument("file", metavar="FILE|FOLDER", help="project file (.toml), or a folder")
    b.add_argument("more", nargs="*", metavar="FILE", help="more project files (a set of records)")
    b.add_argument(
        "-o", "--output", help="package path (default: NUMBER-revREV.pdf beside the project)"
    )
    b.add_argument(
        "--previous", metavar="OLD", help="earlier package (.pdf) or project file to compare with"
    )
    b.add_argument(
        "--strict", action="store_true", help="refuse a previous revision of another document"
    )
    b.add_argument(
        "--sign",
        metavar="KEY.p12",
        help="sign with this PKCS#12 key (password from CALCDOC_KEY_PASSWORD)",
    )
    b.add_argument(
        "--changed",
        action="store_true",
        help="skip a record whose package embeds the same input and calcdoc version",
    )
    b.add_argument(
        "-j",
        "--jobs",
        type=_jobs,
        metavar="N",
        help="records built at once (default: the number of CPUs)",
    )
    b.add_argument("-q", "--quiet", action="store_true", help="no progress display")

    n = sub.add_parser("new", help="write a starter project (never overwrites)")
    n.add_argument("file", help="project file to create (.toml)")

    sub.add_parser(
        "schema",
        help="print the project file's JSON Schema, for editors that complete and check keys",
        description="Print the JSON Schema (draft 2020-12) of the project file; save it with "
        "`calcdoc schema > calcdoc.schema.json` and point your TOML editor at it.",
    )

    s = sub.add_parser("solve", help="print the results (tables, or JSON)")
    s.add_argument("file", help="project file (.toml)")
    s.add_argument("--json", action="store_true", help="print the results object as JSON")

    c = sub.add_parser("check", help="run every design check; exit 1 if any fails")
    c.add_argument("file", help="project file (.toml)")

    d = sub.add_parser("diff", help="compare two revisions (project files or packages)")
    d.add_argument("old")
    d.add_argument("new")
    d.add_argument("--json", action="store_true", help="print the comparison as JSON")
    d.add_argument("--exit-code", action="store_true", help="exit 1 when anything changed")

    v = sub.add_parser("verify", help="check a package's signature, embedded input and results")
    v.add_argument("package", help="package (.pdf)")
    v.add_argument(
        "--trust",
        action="append",
        default=[],
        metavar="CERT.pem",
        help="trusted signer or CA certificate (repeatable)",
    )
    v.add_argument("--json", action="store_true", help="print the findings as JSON")
    return ap


def _jobs(text: str) -> int:
    try:
        n = int(text)
    except ValueError:
        n = 0
    if n < 1:
        raise argparse.ArgumentTypeError(f"expected a whole number of at least 1, not {text!r}")
    return n


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status."""
    args = parser().parse_args(argv)
    from calcdoc.output import Terminal

    # a command makes many small objects and few reference cycles: collect cycles
    # less often (the default thresholds spend a tenth of a large solve in the collector)
    gc.set_threshold(50_000, 20, 100)
    term = Terminal()
    try:
        return _run(args, term)
    except KeyboardInterrupt:
        term.error("interrupted")
        return EXIT_INTERRUPTED


def _run(args: argparse.Namespace, term) -> int:
    """The command, with every error mapped to one message and an exit status."""
    from calcdoc.errors import CalcdocError, ProjectError, SingularCircuitError

    where = getattr(args, "file", None) or getattr(args, "package", None) or ""
    try:
        module = importlib.import_module(f"calcdoc.commands.{args.command}")
        return int(module.run(args, term))
    except ProjectError as exc:
        term.error(*exc.lines)
    except SingularCircuitError as exc:
        term.error(singular_message(exc, getattr(args, "file", None) or ""))
    except CalcdocError as exc:
        term.error(str(exc))
    except BrokenPipeError:  # pragma: no cover - e.g. piped into head
        return EXIT_OK
    except MemoryError:
        term.error(f"{where}: out of memory while processing this input; see the limits in README")
    except RecursionError:
        term.error(f"{where}: the input is nested too deeply to process")
    except Exception:  # a bug: still no traceback and no exception name for the user
        import os

        if os.environ.get("CALCDOC_DEBUG"):
            raise
        term.error(
            f"{where}: internal error while processing this input (a fault in calcdoc, not "
            "necessarily in the input); set CALCDOC_DEBUG=1 for details and please report it"
        )
    return EXIT_INPUT


def singular_message(exc, file: str) -> str:
    """``FILE: KEY: condition: detail`` for a circuit that cannot be solved."""
    case = getattr(exc, "case", "nominal")
    key = "circuit"
    if exc.condition in ("zero-ohm resistor", "negative resistance"):
        key = f"elements.{exc.culprits[0]}.value"
    where = "" if case == "nominal" else f" (case {case!r})"
    return f"{file}: {key}: {exc.condition}{where}: {exc.detail}"


def entry() -> None:  # pragma: no cover
    try:
        status = main()
    except KeyboardInterrupt:  # Ctrl-C before the command's own handling started
        print("calcdoc: error: interrupted", file=sys.stderr)
        status = EXIT_INTERRUPTED
    sys.exit(status)


if __name__ == "__main__":  # pragma: no cover
    entry()
