"""The shape of the code base: imports point one way with no cycles, and every document a file
cites is in the repository.

- The module-level import graph of ``engine``, ``adapters`` and ``api`` (built from the
  source with :mod:`ast`, so nothing is imported) has no cycle, and no edge points
  against ``api -> adapters -> engine``.
- An import inside a function is allowed only where a comment beside it (or on the
  lines above) says why: a measured start-up cost, or an order the start-up needs.
- A tracked file that names a Markdown document (``engine/README.md``) names one that
  exists in the repository; the project's contract lives inside it.
"""

from __future__ import annotations

import ast
import re
import subprocess
from collections.abc import Iterator
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGES = ("engine", "adapters", "api")
LAYER = {"engine": 0, "adapters": 1, "api": 2}  # an import may only point to an equal or lower layer


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _modules() -> dict[str, Path]:
    found: dict[str, Path] = {}
    for package in PACKAGES:
        for path in sorted((ROOT / package).rglob("*.py")):
            if "migrations" in path.parts:  # Alembic scripts are run by Alembic, not imported
                continue
            found[_module_name(path)] = path
    return found


def _resolve(module: str, is_package: bool, level: int, target: str | None) -> str:
    if level == 0:
        return target or ""
    base = module.split(".")
    if not is_package:
        base = base[:-1]
    base = base[: len(base) - (level - 1)] if level > 1 else base
    return ".".join(base + ([target] if target else []))


def _imports(module: str, path: Path, known: dict[str, Path]) -> Iterator[tuple[str, ast.AST, bool]]:
    """(imported module, node, at module level) for every import of ours in ``path``."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    top = {id(node) for node in tree.body}
    for node in tree.body:  # imports guarded at module level (try/except ImportError) are still top
        if isinstance(node, ast.Try | ast.If):
            top.update(id(inner) for inner in ast.walk(node))
    is_package = path.name == "__init__.py"
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = _resolve(module, is_package, node.level, node.module)
            names = [f"{base}.{a.name}" if f"{base}.{a.name}" in known else base for a in node.names]
        else:
            continue
        for name in names:
            if name.split(".")[0] in PACKAGES:
                while name not in known and "." in name:
                    name = name.rsplit(".", 1)[0]
                yield name, node, id(node) in top


def _graph() -> dict[str, set[str]]:
    known = _modules()
    edges: dict[str, set[str]] = {name: set() for name in known}
    for name, path in known.items():
        for target, _node, at_top in _imports(name, path, known):
            if at_top and target != name and target in known:
                edges[name].add(target)
    return edges


def _cycles(edges: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components of more than one module (Tarjan), each a cycle."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []
    counter = 0

    def visit(node: str) -> None:
        nonlocal counter
        index[node] = low[node] = counter
        counter += 1
        stack.append(node)
        on_stack.add(node)
        for nxt in sorted(edges[node]):
            if nxt not in index:
                visit(nxt)
                low[node] = min(low[node], low[nxt])
            elif nxt in on_stack:
                low[node] = min(low[node], index[nxt])
        if low[node] == index[node]:
            component = []
            while True:
                top = stack.pop()
                on_stack.discard(top)
                component.append(top)
                if top == node:
                    break
            if len(component) > 1:
                found.append(sorted(component))

    for node in sorted(edges):
        if node not in index:
            visit(node)
    return found


def test_the_import_graph_has_no_cycle() -> None:
    """No module of engine, adapters or api reaches itself again through module-level imports."""
    assert _cycles(_graph()) == []


def test_the_cycle_finder_finds_a_cycle() -> None:
    """The check above can fail: a → b → c → a is reported (and a lone self-import is not a cycle)."""
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"d"}}) == [["a", "b", "c"]]


def test_imports_point_one_way() -> None:
    """api may import adapters and engine, adapters only engine, engine neither (at any depth)."""
    known = _modules()
    wrong = []
    for name, path in known.items():
        for target, node, _top in _imports(name, path, known):
            if LAYER[target.split(".")[0]] > LAYER[name.split(".")[0]]:
                wrong.append(f"{name}:{getattr(node, 'lineno', '?')} imports {target}")
    assert wrong == []


_MEASURED = re.compile(r"start-up|startup|import cost|measured|import order", re.IGNORECASE)


def test_imports_inside_functions_say_why() -> None:
    """An import inside a function is a measured start-up cost and says so beside it."""
    unexplained = []
    for package in PACKAGES:
        for path in sorted((ROOT / package).rglob("*.py")):
            if "migrations" in path.parts:
                continue
            lines = path.read_text(encoding="utf-8").splitlines()
            tree = ast.parse("\n".join(lines))
            for func in ast.walk(tree):
                if not isinstance(func, ast.FunctionDef | ast.AsyncFunctionDef):
                    continue
                for node in ast.walk(func):
                    if isinstance(node, ast.Import | ast.ImportFrom):
                        near = " ".join(lines[max(0, node.lineno - 5): node.lineno])
                        if not _MEASURED.search(near):
                            unexplained.append(f"{path.relative_to(ROOT)}:{node.lineno}")
    assert unexplained == []


_DOC = re.compile(r"(?<![\w/.-])((?:[\w.-]+/)*[\w-]+\.md)\b")


def _tracked_text_files() -> list[Path]:
    listed = subprocess.run(["git", "ls-files"], cwd=ROOT, capture_output=True, text=True, check=False)
    if listed.returncode != 0:
        pytest.skip(f"not a git checkout: {listed.stderr.strip()}")
    out = []
    for name in listed.stdout.splitlines():
        path = ROOT / name
        if path.suffix in {".py", ".md", ".toml", ".json", ".sh", ".txt", ".cfg", ".ini", ".mako", ".lua",
                           ".yml", ".yaml", ""} and path.is_file():
            out.append(path)
    return out


def test_every_cited_document_is_in_the_repository() -> None:
    """A file that names a Markdown document names one the repository holds (not a file outside it)."""
    tracked = {p.relative_to(ROOT).as_posix() for p in _tracked_text_files()}
    by_name = {Path(p).name for p in tracked}
    missing = []
    for path in _tracked_text_files():
        text = path.read_text(encoding="utf-8", errors="replace")
        for match in _DOC.finditer(text):
            cited = match.group(1)
            here = (path.parent / cited).resolve()
            inside = here.is_relative_to(ROOT) and here.relative_to(ROOT).as_posix() in tracked
            if cited in tracked or inside or ("/" not in cited and cited in by_name):
                continue
            missing.append(f"{path.relative_to(ROOT)} cites {cited}")
    assert missing == []


def test_the_document_check_can_fail(tmp_path: Path) -> None:
    """The pattern finds a cited document in prose and in code (so the check above is not vacuous)."""
    outside = "shared/NOTES" + ".md"  # put together here, so that this file does not itself cite it
    text = f"see `{outside}` and engine/README.md; not README.mdx"
    assert [m.group(1) for m in _DOC.finditer(text)] == [outside, "engine/README.md"]
