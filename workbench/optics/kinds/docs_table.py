"""The table of element kinds in docs/design-file.md, written from the registry.

``uv run python -m workbench.optics.kinds.docs_table`` rewrites the part of
docs/design-file.md between the markers :data:`BEGIN` and :data:`END` from
:data:`~workbench.optics.kinds.ELEMENT_KINDS`; ``--check`` only says whether
it is current (exit status 1 when not). A test runs the check, so the table
cannot drift from the code.
"""

from __future__ import annotations

import sys
from pathlib import Path

from workbench.errors import WorkbenchError
from workbench.fileio.atomic import write_text_atomically
from workbench.optics.kinds.registry import ELEMENT_KINDS, ElementKind, OptionSpec, ParamSpec

__all__ = ["BEGIN", "END", "kinds_table", "updated_text", "main"]

BEGIN = "<!-- element kinds: generated from workbench/optics/kinds by `python -m workbench.optics.kinds.docs_table` -->"
END = "<!-- end of element kinds -->"


def _param(key: str, spec: ParamSpec) -> str:
    if spec.default is not None:
        when = f"default {spec.default:g}"
    elif spec.optional:
        when = "optional"
    else:
        when = "required"
    text = f"`{key}` ({spec.describe_short()}; {when})"
    return f"{text}: {spec.meaning}" if spec.meaning else text


def _option(key: str, spec: OptionSpec) -> str:
    if isinstance(spec.kind, tuple):
        what = "/".join(f"`{c}`" for c in spec.kind)
    elif callable(spec.kind):
        what = "see below"
    else:
        what = {"file": "a CSV file", "str": "a name", "positive": "a number > 0", "count": "an integer 1-64",
                "columns": "a table"}[spec.kind]
    if spec.required:
        what += ", required"
    elif spec.default is not None:
        what += f", default `{spec.default}`"
    text = f"`{key}` ({what})"
    return f"{text}: {spec.meaning}" if spec.meaning else text


def _row(kind: ElementKind) -> str:
    what = kind.summary
    rules = []
    if kind.at_most_one:
        rules.append("at most one per chain" if kind.group in (None, kind.name)
                     else f"at most one {kind.group} per chain")
    if not kind.paths_key:
        rules.append("acts on R, G and B itself (no `paths`)")
    rules += [f"`{b}` > `{a}`" for a, b in kind.ordered]
    if kind.reads:
        rules.append(f"its `file` is read as {kind.reads} when the design is loaded")
    if kind.notes:
        rules.append(kind.notes)
    if rules:
        what += "; " + "; ".join(rules)
    params = "; ".join(_param(k, s) for k, s in kind.params.items()) or "—"
    options = "; ".join(_option(k, s) for k, s in kind.options.items()) or "—"
    return f"| `{kind.name}` | {what} | {params} | {options} |"


def kinds_table(kinds=None) -> str:
    """The Markdown table of ``kinds`` (default every registered kind), one row per kind."""
    kinds = ELEMENT_KINDS if kinds is None else kinds
    lines = ["| `type` | what it is | parameters (domain; default) | options |", "|---|---|---|---|"]
    lines += [_row(k) for k in kinds.values()]
    return "\n".join(lines)


def updated_text(text: str, *, source: str = "docs/design-file.md") -> str:
    """``text`` with the part between the markers replaced by :func:`kinds_table`."""
    try:
        a = text.index(BEGIN) + len(BEGIN)
        b = text.index(END, a)
    except ValueError:
        raise WorkbenchError(f"{source}: expected the markers {BEGIN!r} and {END!r} around the kinds table") from None
    return text[:a] + "\n" + kinds_table() + "\n" + text[b:]


def main(argv=None) -> int:
    """Rewrite (or with ``--check`` only compare) the kinds table of docs/design-file.md."""
    args = list(sys.argv[1:] if argv is None else argv)
    check = "--check" in args
    paths = [a for a in args if a != "--check"]
    path = Path(paths[0]) if paths else Path(__file__).resolve().parents[3] / "docs" / "design-file.md"
    text = path.read_text(encoding="utf-8")
    new = updated_text(text, source=str(path))
    if new == text:
        print(f"{path}: the kinds table is current")
        return 0
    if check:
        print(f"{path}: the kinds table differs from the registry; run python -m workbench.optics.kinds.docs_table")
        return 1
    write_text_atomically(path, new)
    print(f"{path}: kinds table rewritten")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
