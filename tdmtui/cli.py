"""Command line: ``tdmtui [CASE]`` opens the app; ``tdmtui compute`` and ``tdmtui note`` print.

Exit status (case-format.md): 0 computed (a ``status: stop`` result too);
2 input error, one line on stderr naming the field; 3 valid input but no
estimate by the requested method (stderr says why). Never a traceback: any
other failure prints one line and exits 1.

The app and the computation core are imported lazily so each command loads
only what it needs.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

SUBCOMMANDS = ("compute", "note", "import", "batch")
USAGE = ("usage: tdmtui [CASE] | tdmtui compute CASE [--json] [--record] | "
         "tdmtui note CASE [--full] [--out FILE] | tdmtui import BUNDLE | tdmtui batch PATH... [--out FILE]\n"
         "  tdmtui CASE opens the app (a file that does not exist yet starts a new case saved there);\n"
         "  'tdmtui --help' or 'tdmtui note --help' lists every option.")


def _looks_like_command(word: str) -> bool:
    """A bare word that is no file and no file name (``help``, ``comptue``): a mistyped command."""
    return (word.isascii() and word.replace("-", "").isalpha() and not word.startswith("-")
            and not Path(word).exists())


def _unknown_command(word: str) -> int:
    if word == "help":
        print(USAGE)
        return 0
    print(f"tdmtui: unknown command {word!r} (commands: {', '.join(SUBCOMMANDS)}; a case file name "
          "ends in .json)\n" + USAGE, file=sys.stderr)
    return 2


def _protocol(path: str | None) -> Any:
    from tdmtui.core.library import protocol_or_default

    return protocol_or_default(path)


def _compute(args: argparse.Namespace) -> Any:
    from tdmtui.core.input.case import load_case
    from tdmtui.core.compute import compute

    case = load_case(args.case)
    return compute(case, _protocol(args.protocol), args.method)


def _write_file(path: str | Path, text: str, option: str) -> None:
    """Write an output file (atomic, 0600); an unwritable place is an error naming the option."""
    from tdmtui.core.input.casefile import write_atomic
    from tdmtui.core.errors import InputError

    try:
        write_atomic(path, text.encode("utf-8"))
    except OSError as exc:
        raise InputError(option, f"cannot write {path}: {exc.strerror or exc}") from exc


def cmd_compute(args: argparse.Namespace) -> int:
    from tdmtui.batchrow import result_text  # the one writer of the JSON text (`tdmtui batch` uses it too)

    outcome = _compute(args)
    text = result_text(outcome.result)
    if args.record:
        record = Path(args.case).with_suffix(".result.json")
        _write_file(record, text, "--record")
        _say(f"audit record written to {record}")
    if args.json:
        sys.stdout.write(text)
    else:
        from tdmtui.core.text.report import summary_text

        sys.stdout.write(summary_text(outcome.result))
    return 0


def cmd_note(args: argparse.Namespace) -> int:
    from tdmtui.core.text.note import render_note

    outcome = _compute(args)
    text = render_note(outcome, full=args.full)
    if args.out:
        _write_file(args.out, text, "--out")
        _say(f"note written to {args.out}")
    else:
        sys.stdout.write(text)
    return 0


def _say(message: str) -> None:
    """One line on stderr, free text in it neutralised (a case's key names and values reach here)."""
    from tdmtui.core.input.textsafe import neutralise

    print(neutralise(message), file=sys.stderr)


def _sub_parser(name: str) -> argparse.ArgumentParser:
    from tdmtui.core import registry

    ap = argparse.ArgumentParser(prog=f"tdmtui {name}")
    ap.add_argument("case", help="case file (JSON, tdmtui.case/1)")
    ap.add_argument("--protocol", metavar="FILE", help="local protocol TOML (default: ~/.config/tdmtui/protocol.toml if present)")
    ap.add_argument("--method", choices=registry.CHOICES,
                    help="override the case's method")
    if name == "compute":
        ap.add_argument("--json", action="store_true", help="print the result object as JSON")
        ap.add_argument("--record", action="store_true", help="also save the JSON result beside the case (CASE.result.json, mode 0600)")
    else:
        ap.add_argument("--out", metavar="FILE", help="write the note to FILE (mode 0600) instead of stdout")
        ap.add_argument("--full", action="store_true",
                        help="add every method and model side by side, each dose on its own line, and the references")
    return ap


def _app_parser() -> argparse.ArgumentParser:
    from tdmtui import __version__

    ap = argparse.ArgumentParser(
        prog="tdmtui",
        description="Therapeutic drug monitoring for vancomycin and aminoglycosides. "
                    "Commands: 'tdmtui [CASE]' opens the app; 'tdmtui compute CASE [--json]'; 'tdmtui note CASE [--out FILE]'; "
                    "'tdmtui import BUNDLE.json [--out CASE]' (FHIR R4 export to a case); "
                    "'tdmtui batch PATH... [--out FILE.csv|.jsonl]' (many cases, one row each).")
    ap.add_argument("case", nargs="?", help="case file to open (omit for a new case)")
    ap.add_argument("--protocol", metavar="FILE", help="local protocol TOML")
    ap.add_argument("--mouse", action="store_true", help="enable mouse support (off by default for SSH)")
    ap.add_argument("--ascii", action="store_true",
                    help="draw borders, scrollbars, separators and the plot in ASCII (the default under a "
                         "locale that is not UTF-8, e.g. LANG=C; TDMTUI_PLOT=ascii|braille sets the plot alone)")
    ap.add_argument("--version", action="version", version=f"tdmtui {__version__}")
    return ap


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``tdmtui`` command."""
    argv = list(sys.argv[1:] if argv is None else argv)
    from tdmtui.core.errors import InputError, NoEstimateError

    try:
        if argv and argv[0] == "import":
            from tdmtui.importcmd import main as import_main

            return import_main(argv[1:])
        if argv and argv[0] == "batch":
            from tdmtui.batchcmd import main as batch_main

            return batch_main(argv[1:])
        if argv and argv[0] in SUBCOMMANDS:
            args = _sub_parser(argv[0]).parse_args(argv[1:])
            return cmd_compute(args) if argv[0] == "compute" else cmd_note(args)
        if argv and _looks_like_command(argv[0]):
            return _unknown_command(argv[0])
        args = _app_parser().parse_args(argv)
        from tdmtui.ui.app import run_app

        return run_app(args.case, args.protocol, mouse=args.mouse, ascii_only=args.ascii)
    except InputError as exc:
        _say(f"{exc.field}: {exc.message}" if exc.field else exc.message)
        return 2
    except NoEstimateError as exc:
        _say(f"no estimate by {exc.method}: {exc.why}")
        return 3
    except UnicodeEncodeError as exc:
        _say(f"this terminal's character set ({exc.encoding}) cannot show the output; "
             "use a UTF-8 locale (e.g. LANG=C.UTF-8), or tdmtui note CASE --out FILE")
        return 1
    except KeyboardInterrupt:
        return 130
    except SystemExit as exc:  # argparse usage errors
        return int(exc.code or 0) if isinstance(exc.code, int) else 2
    except Exception as exc:  # noqa: BLE001 - never a traceback for the user
        _say(f"internal error ({type(exc).__name__}: {exc}); please report it with the case file (see SAFETY.md)")
        return 1


if __name__ == "__main__":
    raise SystemExit(main())
