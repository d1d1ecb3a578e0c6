"""The import report: every resource, used or not, and why.

Each line names the resource (``Type/id``), what it became in the case (or
why it did not) and which code table said what it is. The command line
prints it; the app shows it among the warnings. Text from the export is
escaped to one printable line before it is shown anywhere.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from tdmtui.core.errors import one_line

USED, NOT_USED, NOTE = "used", "not used", "note"


@dataclass(frozen=True)
class Line:
    """One resource's fate (or a general remark when ``resource`` is empty)."""

    status: str        # used | not used | note
    resource: str
    text: str
    mapping: str = ""

    def render(self) -> str:
        where = f"{self.resource}: " if self.resource else ""
        via = f" [{self.mapping}]" if self.mapping else ""
        return one_line(f"{where}{self.text}{via}")


@dataclass
class Report:
    """What an import did, in order: header facts, then one line per resource."""

    source: str
    drug: str = ""
    as_of: str = ""
    as_of_from: str = ""
    protocol: str = ""
    lines: list[Line] = field(default_factory=list)
    missing: list[tuple[str, str]] = field(default_factory=list)

    def used(self, resource: str, text: str, mapping: str = "") -> None:
        self.lines.append(Line(USED, resource, text, mapping))

    def skip(self, resource: str, reason: str, mapping: str = "") -> None:
        self.lines.append(Line(NOT_USED, resource, reason, mapping))

    def note(self, text: str, resource: str = "") -> None:
        self.lines.append(Line(NOTE, resource, text))

    def of(self, status: str) -> list[Line]:
        return [ln for ln in self.lines if ln.status == status]

    def text(self) -> str:
        """The report as plain text (for stderr), one line per item."""
        head = f"Import of {one_line(self.source)}"
        if self.drug:
            head += f" for {self.drug}"
        if self.as_of:
            head += f", as of {one_line(self.as_of)} ({self.as_of_from})"
        out = [head]
        if self.protocol:
            out.append(f"Local codes from protocol: {one_line(self.protocol)}")
        for status, title in ((USED, "Used"), (NOT_USED, "Not used"), (NOTE, "Notes")):
            lines = self.of(status)
            if lines:
                out.append(f"{title} ({len(lines)}):")
                out += [f"  {ln.render()}" for ln in lines]
        for part, why in self.missing:
            out.append(f"MISSING {part}: {one_line(why)}")
        return "\n".join(out) + "\n"

    def alerts(self) -> list[dict[str, str]]:
        """The report as warnings in the result's shape, for the app's warning list."""
        out = [{"code": "import-missing", "severity": "caution", "field": part,
                "message": one_line(f"Not in the import: {why}. Type it before relying on the result.")}
               for part, why in self.missing]
        for ln in self.of(NOT_USED):
            out.append({"code": "import-not-used", "severity": "caution", "field": one_line(ln.resource),
                        "message": one_line(f"Not imported: {ln.text}" + (f" [{ln.mapping}]" if ln.mapping else ""))})
        for ln in self.of(NOTE):
            out.append({"code": "import-note", "severity": "info", "field": one_line(ln.resource),
                        "message": one_line(ln.text)})
        used = self.of(USED)
        out.append({"code": "import-review", "severity": "info", "field": "",
                    "message": one_line(f"Imported from {self.source}: {len(used)} resources used; "
                                        "review every value and save under a new name.")})
        return out
