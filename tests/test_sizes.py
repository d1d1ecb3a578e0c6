"""Small modules and functions: no module under tdmtui/ over 400 lines, no function over 60.

DEVELOPERS.md's rule (modules under about 400 lines, functions under about 60), checked on the
source: a module's lines as the file has them, a function's from its ``def`` to its last line
(docstring included; a nested function is measured on its own too). A module or function that
grows past the limit fails here: split it into named steps or cohesive modules. The allow-list
below names the only exceptions, each with its reason; an entry that is no longer needed fails too,
so the list only shrinks.
"""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "tdmtui"
MAX_MODULE_LINES = 400
MAX_FUNCTION_LINES = 60

#: Modules allowed over MAX_MODULE_LINES, path from the repository root -> why.
LONG_MODULES: dict[str, str] = {}


def module_lines(path: Path) -> int:
    return len(path.read_text(encoding="utf-8").splitlines())


def long_functions(path: Path, limit: int = MAX_FUNCTION_LINES) -> list[str]:
    """``name (N lines, line L)`` for every function or method of one module longer than ``limit``."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out = []
    for node in ast.walk(tree):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            n = (node.end_lineno or node.lineno) - node.lineno + 1
            if n > limit:
                out.append(f"{node.name} ({n} lines, line {node.lineno})")
    return out


def _modules() -> list[Path]:
    return sorted(PACKAGE.rglob("*.py"))


def test_the_package_has_modules_to_measure():
    assert len(_modules()) > 100  # the walk found the package, not an empty folder


def test_no_module_over_the_limit_but_the_listed():
    over = {str(p.relative_to(ROOT)): module_lines(p) for p in _modules() if module_lines(p) > MAX_MODULE_LINES}
    unlisted = {k: v for k, v in over.items() if k not in LONG_MODULES}
    assert unlisted == {}, f"modules over {MAX_MODULE_LINES} lines: split them (DEVELOPERS.md)"


def test_the_allow_list_is_still_needed():
    stale = [k for k in LONG_MODULES if not (ROOT / k).exists() or module_lines(ROOT / k) <= MAX_MODULE_LINES]
    assert stale == [], "these modules are within the limit now: remove them from LONG_MODULES"


def test_no_function_over_the_limit():
    over = {str(p.relative_to(ROOT)): fns for p in _modules() if (fns := long_functions(p))}
    assert over == {}, f"functions over {MAX_FUNCTION_LINES} lines: split them into named steps"


def test_the_measure_sees_a_long_function_and_a_nested_one(tmp_path):
    body = "\n".join(f"    x{i} = {i}" for i in range(60))
    src = f"def long():\n{body}\n\n\ndef short():\n    def inner():\n{body.replace('    ', '        ')}\n    return 1\n"
    path = tmp_path / "m.py"
    path.write_text(src, encoding="utf-8")
    assert long_functions(path) == ["long (61 lines, line 1)", "short (63 lines, line 64)", "inner (61 lines, line 65)"]
    assert module_lines(path) == 126
