"""Sizes of the units of the ``kinetics`` package against the budgets of DEVELOPERS.md.

Usage::

    python tools/unit_sizes.py [--top N]

Files are counted in lines; classes in lines (their whole extent); functions in code lines
(neither blank, nor comment, nor docstring).  Prints everything over budget and the largest
of each kind.
"""

from __future__ import annotations

import ast
import io
import sys
import tokenize
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1] / "kinetics"
FILE_BUDGET, CLASS_BUDGET, FUNCTION_BUDGET = 800, 300, 80


def _code_lines(source: str, node: ast.AST) -> int:
    """Lines of ``node`` holding code: not blank, not only a comment, not a docstring."""
    lines = set(range(node.lineno, node.end_lineno + 1))
    body = getattr(node, "body", [])
    if body and isinstance(body[0], ast.Expr) and isinstance(body[0].value, ast.Constant):
        if isinstance(body[0].value.value, str):
            lines -= set(range(body[0].lineno, body[0].end_lineno + 1))
    text = source.splitlines()
    code = set()
    tokens = tokenize.generate_tokens(io.StringIO(source).readline)
    skip = {tokenize.COMMENT, tokenize.NL, tokenize.NEWLINE, tokenize.INDENT, tokenize.DEDENT}
    for tok in tokens:
        if tok.type not in skip:
            code.update(range(tok.start[0], tok.end[0] + 1))
    del text
    return len(lines & code)


def main() -> None:
    top = int(sys.argv[sys.argv.index("--top") + 1]) if "--top" in sys.argv else 5
    files, classes, functions = [], [], []
    for path in sorted(ROOT.rglob("*.py")):
        source = path.read_text(encoding="utf-8")
        name = str(path.relative_to(ROOT.parent))
        files.append((len(source.splitlines()), name))
        for node in ast.walk(ast.parse(source)):
            if isinstance(node, ast.ClassDef):
                classes.append((node.end_lineno - node.lineno + 1, f"{name}:{node.name}"))
            elif isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
                functions.append((_code_lines(source, node), f"{name}:{node.name}"))
    for label, items, budget in (
        ("files [lines]", files, FILE_BUDGET),
        ("classes [lines]", classes, CLASS_BUDGET),
        ("functions [code lines]", functions, FUNCTION_BUDGET),
    ):
        items.sort(reverse=True)
        over = [f"{n} {what}" for n, what in items if n > budget]
        print(f"{label}: {len(over)} over {budget}")
        for line in over:
            print(f"  over: {line}")
        for n, what in items[:top]:
            print(f"  {n:5d} {what}")


if __name__ == "__main__":
    main()
