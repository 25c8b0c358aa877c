"""A gate on the size of the code (issue 12, "done when"): no function in lumeval/ longer than
150 lines and no module longer than 800. A module that crossed the limit while others worked is
listed below with its size, until its owner splits it; nothing else may join the list."""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "lumeval"
MAX_FUNCTION_LINES = 150
MAX_MODULE_LINES = 800


def _sizes():
    functions, modules = {}, {}
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(PACKAGE).as_posix()
        text = path.read_text(encoding="utf-8")
        modules[rel] = text.count("\n") + (not text.endswith("\n"))
        for node in ast.walk(ast.parse(text)):
            if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
                name = f"{rel}:{node.name}"
                functions[name] = max(functions.get(name, 0), node.end_lineno - node.lineno + 1)
    return functions, modules


def test_functions_and_modules_stay_small():
    functions, modules = _sizes()
    too_long = {n: s for n, s in functions.items() if s > MAX_FUNCTION_LINES}
    too_big = {n: s for n, s in modules.items() if s > MAX_MODULE_LINES}
    assert not too_long, f"functions over {MAX_FUNCTION_LINES} lines (split them): {too_long}"
    assert not too_big, f"modules over {MAX_MODULE_LINES} lines (split them): {too_big}"


def test_the_gate_measures_what_it_says():
    functions, modules = _sizes()
    assert functions["spectra/tm27.py:parse_tm27"] <= MAX_FUNCTION_LINES  # split below the limit
    assert max(functions.values()) > 100 and len(modules) > 50  # it really reads the package
