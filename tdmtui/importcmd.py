"""``tdmtui import BUNDLE.json``: a FHIR R4 export to a case file.

The report (every resource: used, not used and why, notes) goes to stderr;
the case goes to ``--out`` (mode 0600, never over an existing file without
``--force``) or to stdout. The case is written only when every required part
is there and it parses as ``compute`` will read it; otherwise exit 2 naming
the missing part. Only the stdlib-based importer is loaded, not the engine.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path


def parser() -> argparse.ArgumentParser:
    ap = argparse.ArgumentParser(prog="tdmtui import",
                                 description="Write a case from a FHIR R4 export (Bundle collection or searchset, "
                                             "or a JSON array of resources).")
    ap.add_argument("bundle", help="the export (JSON)")
    ap.add_argument("--out", metavar="CASE", help="write the case here (mode 0600) instead of stdout")
    ap.add_argument("--force", action="store_true", help="replace CASE if it exists")
    ap.add_argument("--drug", help="the drug of the case when the export holds more than one")
    ap.add_argument("--as-of", dest="as_of", metavar="TIME",
                    help="the moment assessed (default: the Bundle's timestamp, else the latest event)")
    ap.add_argument("--protocol", metavar="FILE",
                    help="local protocol TOML whose [local_codes] apply (default: ~/.config/tdmtui/protocol.toml)")
    ap.add_argument("--check-structure", action="store_true",
                    help="also check every resource against the FHIR models (needs: pip install 'tdmtui[fhir]')")
    return ap


def main(argv: list[str]) -> int:
    """Run the import; InputError propagates to the command line (exit 2)."""
    from tdmtui.core.input.casefile import canonical_bytes, write_atomic
    from tdmtui.core.errors import InputError
    from tdmtui.core.fhir import check_case, import_export
    from tdmtui.core.library import protocol_or_default

    args = parser().parse_args(argv)
    if args.out and Path(args.out).exists() and not args.force:
        raise InputError("--out", f"{args.out} exists; nothing was written (give --force to replace it)")
    try:
        data = Path(args.bundle).read_bytes()
    except OSError as exc:
        raise InputError("(file)", f"cannot read {args.bundle}: {exc.strerror}") from exc
    if args.check_structure:
        from tdmtui.core.fhir.structure import check_structure

        check_structure(data)
    imported = import_export(data, Path(args.bundle).name, drug=args.drug, as_of=args.as_of,
                             protocol=protocol_or_default(args.protocol))
    sys.stderr.write(imported.report.text())
    check_case(imported)
    text = canonical_bytes(imported.raw)
    if args.out:
        if Path(args.out).exists() and not args.force:
            raise InputError("--out", f"{args.out} appeared meanwhile; nothing was written (give --force to replace it)")
        write_atomic(args.out, text)
        print(f"case written to {args.out} (mode 0600): review it before use, e.g. tdmtui {args.out}", file=sys.stderr)
    else:
        sys.stdout.buffer.write(text) if hasattr(sys.stdout, "buffer") else sys.stdout.write(text.decode("utf-8"))
    return 0
