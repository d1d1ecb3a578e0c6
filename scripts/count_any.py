"""Count bare ``Any`` in the public function signatures of tdmtui/core (the module seams).

Usage: ``python scripts/count_any.py [--list]``. A bare ``Any`` is an annotation that is
exactly ``Any`` (a parameter or the return); ``dict[str, Any]`` (a JSON object) is not bare.
Public: a module-level function or a method of a module-level class whose name has no
leading underscore (dunder methods count as public).
"""

from __future__ import annotations

import ast
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1] / "tdmtui" / "core"


def _bare(node: ast.expr | None) -> bool:
    if node is None:
        return False
    if isinstance(node, ast.Constant) and isinstance(node.value, str):
        return node.value.strip() in ("Any", "typing.Any")
    return (isinstance(node, ast.Name) and node.id == "Any") or (
        isinstance(node, ast.Attribute) and node.attr == "Any")


def _public(name: str) -> bool:
    return not name.startswith("_") or (name.startswith("__") and name.endswith("__"))


def seams(path: Path) -> list[str]:
    """``file:line function(param)`` for every bare Any at a public signature of one module."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    funcs: list[ast.FunctionDef | ast.AsyncFunctionDef] = []
    for node in tree.body:
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            funcs.append(node)
        elif isinstance(node, ast.ClassDef) and _public(node.name):
            funcs += [n for n in node.body if isinstance(n, (ast.FunctionDef, ast.AsyncFunctionDef))]
    out = []
    for fn in funcs:
        if not _public(fn.name):
            continue
        a = fn.args
        for arg in [*a.posonlyargs, *a.args, *a.kwonlyargs, *([a.vararg] if a.vararg else []),
                    *([a.kwarg] if a.kwarg else [])]:
            if _bare(arg.annotation):
                out.append(f"{path.relative_to(ROOT.parents[1])}:{fn.lineno} {fn.name}({arg.arg})")
        if _bare(fn.returns):
            out.append(f"{path.relative_to(ROOT.parents[1])}:{fn.lineno} {fn.name} -> Any")
    return out


def main(argv: list[str]) -> int:
    found = [s for p in sorted(ROOT.rglob("*.py")) for s in seams(p)]
    if "--list" in argv:
        print("\n".join(found))
    print(f"bare Any at public signatures of tdmtui/core: {len(found)}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
