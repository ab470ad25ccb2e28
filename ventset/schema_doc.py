"""resources/SCHEMA.md, generated from the declared schema: ``python -m ventset.datafiles [--write]``."""

from __future__ import annotations

from collections.abc import Sequence

from ventset.schema import Entries, Field, FileSchema, Number, Section, Table, TableList, default_text

_HEAD = ("key", "type", "unit", "allowed", "required", "meaning")


def _md_table(rows: list[tuple[str, ...]]) -> list[str]:
    def cell(s: str) -> str:
        return s.replace("|", "\\|").replace("\n", " ")
    out = ["| " + " | ".join(_HEAD) + " |", "|" + "---|" * len(_HEAD)]
    return out + ["| " + " | ".join(cell(c) for c in r) + " |" for r in rows]


def _heading(f: Field) -> str:
    if isinstance(f, Entries):
        return f"### `[{f.name}.<key>]`: {f.label} entries"
    if isinstance(f, TableList):
        return f"### `[[{f.name}]]`"
    return f"### `[{f.name}]`"


def _render_file(fs: FileSchema) -> list[str]:
    out = [f"## {fs.name}: {fs.title}", ""]
    if fs.doc:
        out += [fs.doc.strip(), ""]
    plain = [f for f in fs.fields if not isinstance(f, Section | Entries | TableList)]
    version = () if fs.version is None else (
        Number("schema_version", integer=True, lo=fs.version, hi=fs.version, help="layout version"),)
    rows = [r for f in (*version, *plain) for r in f.doc_rows()]
    out += (_md_table(rows) + [""]) if rows else []
    for f in fs.fields:
        if f in plain or not isinstance(f, Table):
            continue
        out += [_heading(f), ""]
        if f.help:
            out += [f.help, ""]
        if not f.required:
            out += [f"Optional (default {default_text(f.default)}).", ""]
        out += _md_table([r for sub in f.fields for r in sub.doc_rows()]) + [""]
        if f.check_texts():
            out += ["Checked across fields: " + "; ".join(f.check_texts()) + ".", ""]
    if fs.checks:
        out += ["Checked across the file:", ""] + [f"- {t}" for t in
                                                     Table("", checks=fs.checks).check_texts()] + [""]
    return out


def render_markdown(files: Sequence[FileSchema], preamble: str) -> str:
    """The text of resources/SCHEMA.md for ``files`` (generated: edit ventset/datafiles.py, not the output)."""
    out = [preamble.strip(), ""]
    for fs in files:
        out += _render_file(fs)
    return "\n".join(out).rstrip() + "\n"
