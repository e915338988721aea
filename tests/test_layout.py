"""The package's layout rules (DEVELOPERS.md, "Imports and display"), read from the source with ``ast``.

- Imports sit at the top of modules: at most 20 imports inside functions, each
  with a comment saying why it is late (an optional heavy library, or a cycle).
- No module imports another module's private name (``from x import _y``).
- Computation builds no HTML: every ``_repr_html_`` outside ``workbench/report/``
  is one ``return`` of a call (it delegates to :mod:`workbench.report.html`).
- One JSON cleaner: ``json.dumps`` of results only in ``workbench/report/json_text.py``.
- Modules of at most 600 lines, unless the module docstring says why
  (a paragraph starting 'Over 600 lines for a reason:').
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "workbench"
#: The ceiling the layout issue sets for imports inside functions.
MAX_LATE_IMPORTS = 20
#: The longest a module may be without saying why in its docstring.
MAX_MODULE_LINES = 600
#: The words a longer module's docstring uses to say why.
LONG_MODULE_REASON = "Over 600 lines for a reason:"


def _modules(package: Path = PACKAGE):
    for path in sorted(package.rglob("*.py")):
        yield path, ast.parse(path.read_text(encoding="utf-8")), path.read_text(encoding="utf-8").splitlines()


def late_imports(package: Path = PACKAGE) -> list[tuple[Path, int, str]]:
    """(file, line, module) of every import statement inside a function of ``package``."""
    out = []
    for path, tree, _ in _modules(package):
        seen = set()
        for node in ast.walk(tree):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                for sub in ast.walk(node):
                    if isinstance(sub, (ast.Import, ast.ImportFrom)) and sub.lineno not in seen:
                        seen.add(sub.lineno)
                        mod = sub.module if isinstance(sub, ast.ImportFrom) else sub.names[0].name
                        out.append((path, sub.lineno, mod or "."))
    return out


def _commented(lines: list[str], lineno: int) -> bool:
    """A comment on the import's line or on one of the three lines above it."""
    return any("#" in lines[i] for i in range(max(0, lineno - 4), lineno))


class TestLateImports:
    def test_at_most_twenty(self):
        """At most 20 imports inside functions in the whole package."""
        found = late_imports()
        listing = "\n".join(f"{p.relative_to(PACKAGE.parent)}:{n}: {m}" for p, n, m in found)
        assert len(found) <= MAX_LATE_IMPORTS, f"{len(found)} imports inside functions:\n{listing}"

    def test_each_says_why(self):
        """Every import inside a function has a comment saying why it is late."""
        texts = {p: p.read_text(encoding="utf-8").splitlines() for p in PACKAGE.rglob("*.py")}
        bare = [f"{p.relative_to(PACKAGE.parent)}:{n}: {m}" for p, n, m in late_imports()
                if not _commented(texts[p], n)]
        assert bare == []

    def test_counter_sees_a_late_import(self, tmp_path):
        """The counter finds an import inside a function and the comment rule sees none (so both can fail)."""
        (tmp_path / "m.py").write_text("import os\n\n\ndef f():\n    import json\n    return json\n")
        assert [(p.name, n, m) for p, n, m in late_imports(tmp_path)] == [("m.py", 5, "json")]
        assert not _commented((tmp_path / "m.py").read_text().splitlines(), 5)


class TestNoPrivateImports:
    def test_no_private_name_imported_across_modules(self):
        """No ``from workbench.x import _name`` anywhere in the package."""
        bad = []
        for path, tree, _ in _modules():
            for node in ast.walk(tree):
                if isinstance(node, ast.ImportFrom) and (node.module or "").startswith("workbench"):
                    for alias in node.names:
                        if alias.name.startswith("_") and not alias.name.startswith("__"):
                            bad.append(f"{path.relative_to(PACKAGE.parent)}:{node.lineno}: {alias.name}")
        assert bad == []


class TestDisplayOutOfComputation:
    @pytest.mark.parametrize("path", [p for p in sorted(PACKAGE.rglob("*.py")) if "report" not in p.parts],
                             ids=lambda p: str(p.relative_to(PACKAGE)))
    def test_repr_html_delegates(self, path):
        """A ``_repr_html_`` outside workbench/report/ is a single ``return report_function(self)``."""
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.FunctionDef) and node.name == "_repr_html_":
                body = [b for b in node.body if not (isinstance(b, ast.Expr) and isinstance(b.value, ast.Constant))]
                assert len(body) == 1 and isinstance(body[0], ast.Return) and isinstance(body[0].value, ast.Call), \
                    f"{path.name}:{node.lineno} builds HTML itself"

    def test_one_json_writer_of_results(self):
        """``json.dumps`` with ``allow_nan=False`` (the results' JSON) appears only in report/json_text.py."""
        users = []
        for path, tree, _ in _modules():
            for node in ast.walk(tree):
                if (isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute) and node.func.attr == "dumps"
                        and any(k.arg == "allow_nan" for k in node.keywords)):
                    users.append(str(path.relative_to(PACKAGE)))
        assert users == ["report/json_text.py"]


def too_long(text: str, *, limit: int = MAX_MODULE_LINES) -> bool:
    """A module's ``text`` is longer than ``limit`` lines and its docstring does not say why."""
    if len(text.splitlines()) <= limit:
        return False
    return LONG_MODULE_REASON not in (ast.get_docstring(ast.parse(text), clean=False) or "")


class TestModuleLength:
    def test_every_module_short_or_says_why(self):
        """Every module under workbench/ is at most 600 lines, or its docstring says 'Over 600 lines for a reason:'."""
        long_ = [f"{p.relative_to(PACKAGE.parent)}: {len(lines)} lines" for p, _, lines in _modules()
                 if too_long("\n".join(lines))]
        assert long_ == []

    def test_rule_sees_a_long_module(self):
        """601 lines without the phrase fail; 600 lines, or 601 with the phrase in the docstring, pass."""
        body = "x = 1\n" * 599
        assert too_long('"""A module."""\n' + body + "y = 2\n")
        assert not too_long('"""A module."""\n' + body)
        assert not too_long('"""A module.\n\nOver 600 lines for a reason: one subject.\n"""\n' + body)

    def test_phrase_outside_the_docstring_does_not_count(self):
        """The phrase in a comment or a string below the docstring does not excuse a long module."""
        body = "x = 1\n" * 600
        assert too_long('"""A module."""\n# Over 600 lines for a reason: none\n' + body)
        assert too_long('"""A module."""\ns = "Over 600 lines for a reason: none"\n' + body)
