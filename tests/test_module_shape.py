"""House limits (issue 10, "no god modules"), checked on every module of the package.

- No module in ``inventory/`` over 400 lines (``inventory/core/migrations`` is exempt: frozen
  history, never edited).
- No function or method over 7 parameters (``self``/``cls`` not counted; ``*args`` and
  ``**kwargs`` count one each). Related parameters go into a frozen dataclass (a request or
  options record), not into ``**kwargs``. Exempt: typer command callbacks, detected from
  their signature: every parameter is the ``typer.Context`` or has a ``typer.Option`` /
  ``typer.Argument`` default or ``Annotated[..., typer.Option(...)]`` metadata (each
  parameter is then a command-line option, documented by ``--help``).

The checker reads the source with :mod:`ast`; each offender is printed as ``file:line``.
``test_checker_flags_planted_offenders`` feeds it planted offenders so the check cannot pass
by seeing nothing.
"""

from __future__ import annotations

import ast
import textwrap
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "inventory"
MAX_LINES = 400
MAX_PARAMS = 7
EXEMPT = ("inventory/core/migrations/",)

#: Offenders still waiting for their split, each with the reason; the lead empties this.
#: A key is a module path (its length) or ``path::qualified.function`` (its parameters).
#: An entry that no longer offends fails ``test_allowed_entries_still_offend``: delete it.
ALLOWED: dict[str, str] = {
}


def _is_typer_call(node: ast.AST | None) -> bool:
    """``typer.Option(...)``, ``typer.Argument(...)`` (or the bare names imported from typer)."""
    if not isinstance(node, ast.Call):
        return False
    f = node.func
    if isinstance(f, ast.Attribute):
        return f.attr in ("Option", "Argument") and isinstance(f.value, ast.Name) \
            and f.value.id == "typer"
    return isinstance(f, ast.Name) and f.id in ("Option", "Argument")


def _is_context(annotation: ast.AST | None) -> bool:
    if isinstance(annotation, ast.Constant) and isinstance(annotation.value, str):
        return annotation.value in ("typer.Context", "Context")
    return (isinstance(annotation, ast.Attribute) and annotation.attr == "Context") or \
        (isinstance(annotation, ast.Name) and annotation.id == "Context")


def _annotated_option(annotation: ast.AST | None) -> bool:
    """``Annotated[T, typer.Option(...)]``."""
    if isinstance(annotation, ast.Subscript):
        base = annotation.value
        name = base.attr if isinstance(base, ast.Attribute) else getattr(base, "id", "")
        if name == "Annotated" and isinstance(annotation.slice, ast.Tuple):
            return any(_is_typer_call(e) for e in annotation.slice.elts[1:])
    return False


def _params(fn: ast.FunctionDef | ast.AsyncFunctionDef) -> list[tuple[ast.arg, ast.AST | None]]:
    """Every parameter with its default (None when it has none), self/cls left out."""
    a = fn.args
    positional = [*a.posonlyargs, *a.args]
    defaults: list[ast.AST | None] = [None] * (len(positional) - len(a.defaults))
    defaults += list(a.defaults)
    out = list(zip(positional, defaults, strict=True))
    if out and out[0][0].arg in ("self", "cls"):
        out = out[1:]
    out += list(zip(a.kwonlyargs, a.kw_defaults, strict=True))
    if a.vararg is not None:
        out.append((a.vararg, None))
    if a.kwarg is not None:
        out.append((a.kwarg, None))
    return out


def _is_cli_command(params: list[tuple[ast.arg, ast.AST | None]]) -> bool:
    options = [p for p, d in params if _is_typer_call(d) or _annotated_option(p.annotation)]
    rest = [p for p, d in params
            if not (_is_typer_call(d) or _annotated_option(p.annotation))
            and not _is_context(p.annotation)]
    return bool(options) and not rest


def offenders(rel: str, text: str) -> list[tuple[str, str]]:
    """(ALLOWED key, ``file:line: message``) for each breach of the limits in one module."""
    if rel.startswith(EXEMPT):
        return []
    out = []
    n = len(text.splitlines())
    if n > MAX_LINES:
        out.append((rel, f"{rel}:1: {n} lines (limit {MAX_LINES})"))
    tree = ast.parse(text, filename=rel)

    def walk(node: ast.AST, prefix: str) -> None:
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.FunctionDef | ast.AsyncFunctionDef):
                name = f"{prefix}{child.name}"
                params = _params(child)
                if len(params) > MAX_PARAMS and not _is_cli_command(params):
                    out.append((f"{rel}::{name}", f"{rel}:{child.lineno}: {name}() has "
                                f"{len(params)} parameters (limit {MAX_PARAMS})"))
                walk(child, f"{name}.")
            elif isinstance(child, ast.ClassDef):
                walk(child, f"{prefix}{child.name}.")
            else:
                walk(child, prefix)

    walk(tree, "")
    return out


def package_offenders() -> list[tuple[str, str]]:
    out = []
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(ROOT).as_posix()
        out += offenders(rel, path.read_text(encoding="utf-8"))
    return out


def test_package_keeps_the_house_limits() -> None:
    found = [msg for key, msg in package_offenders() if key not in ALLOWED]
    for msg in found:
        print(msg)
    assert not found, "over the house limits (split the module / group the parameters " \
                      "into a frozen dataclass):\n" + "\n".join(found)


def test_allowed_entries_still_offend() -> None:
    keys = {key for key, _ in package_offenders()}
    stale = sorted(set(ALLOWED) - keys)
    assert not stale, f"no longer over the limits, delete from ALLOWED: {stale}"


def test_checker_flags_planted_offenders() -> None:
    long_module = "x = 1\n" * (MAX_LINES + 1)
    assert offenders("inventory/planted.py", long_module) == [
        ("inventory/planted.py", f"inventory/planted.py:1: {MAX_LINES + 1} lines (limit 400)")]
    assert offenders("inventory/planted.py", "x = 1\n" * MAX_LINES) == []
    # frozen history is exempt
    assert offenders("inventory/core/migrations/versions/0001_x.py", long_module) == []

    source = textwrap.dedent('''
        import typer
        from typing import Annotated

        def eight(a, b, c, d, e, f, g, h):
            pass

        def seven(a, b, c, d, e, f, g):
            pass

        def hidden(a, b, c, d, e, f, *args, **kwargs):
            pass

        class Box:
            def method(self, a, b, c, d, e, f, g):
                pass

            def too_many(self, a, b, c, d, e, f, g, h):
                def inner(a, b, c, d, e, f, g, h, i):
                    pass

            @classmethod
            def build(cls, *, a, b, c, d, e, f, g):
                pass

        def command(ctx: typer.Context,
                    a: str = typer.Argument(...), b: int = typer.Option(1, "--b"),
                    c: int = typer.Option(1), d: int = typer.Option(1), e: int = typer.Option(1),
                    f: int = typer.Option(1), g: int = typer.Option(1), h: int = typer.Option(1)):
            pass

        def annotated(a: Annotated[int, typer.Option()], b: Annotated[int, typer.Option()],
                      c: Annotated[int, typer.Option()], d: Annotated[int, typer.Option()],
                      e: Annotated[int, typer.Option()], f: Annotated[int, typer.Option()],
                      g: Annotated[int, typer.Option()], h: Annotated[int, typer.Option()]):
            pass

        def half_cli(a, b, c, d, e, f, g, h: int = typer.Option(1)):
            pass
    ''')
    got = offenders("inventory/planted.py", source)
    assert [key for key, _ in got] == [
        "inventory/planted.py::eight",
        "inventory/planted.py::hidden",
        "inventory/planted.py::Box.too_many",
        "inventory/planted.py::Box.too_many.inner",
        "inventory/planted.py::half_cli",
    ]
    assert got[0][1] == "inventory/planted.py:5: eight() has 8 parameters (limit 7)"
    assert got[3][1].endswith("Box.too_many.inner() has 9 parameters (limit 7)")
