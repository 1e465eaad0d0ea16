"""The QC report (``out/report.md``): each stage adds its own section."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping, Sequence

__all__ = ["Report", "ReportSection", "md_escape"]


def md_escape(text: Any) -> str:
    """Make a user-provided value safe inside a Markdown table cell or line."""
    s = str(text)
    for ch in "\\`*_[]<>|":
        s = s.replace(ch, "\\" + ch)
    return s.replace("\n", " ")


@dataclass
class ReportSection:
    title: str
    lines: list[str] = field(default_factory=list)

    def text(self, *parts: str) -> "ReportSection":
        self.lines.append(" ".join(parts))
        self.lines.append("")
        return self

    def bullets(self, items: Iterable[str]) -> "ReportSection":
        items = list(items)
        self.lines.extend(f"- {i}" for i in items)
        if items:
            self.lines.append("")
        return self

    def kv(self, mapping: Mapping[str, Any]) -> "ReportSection":
        return self.bullets(f"**{k}**: {v}" for k, v in mapping.items())

    def table(self, headers: Sequence[str], rows: Iterable[Sequence[Any]], escape: bool = True) -> "ReportSection":
        rows = list(rows)
        self.lines.append("| " + " | ".join(headers) + " |")
        self.lines.append("|" + "|".join("---" for _ in headers) + "|")
        for r in rows:
            cells = [md_escape(c) if escape else str(c) for c in r]
            self.lines.append("| " + " | ".join(cells) + " |")
        self.lines.append("")
        return self

    def counts(self, label: str, counts: Mapping[str, int]) -> "ReportSection":
        if not counts:
            return self.text(f"{label}: none.")
        return self.table([label, "rows"], sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])))


class Report:
    """An ordered list of sections rendered as Markdown."""

    def __init__(self, title: str):
        self.title = title
        self.sections: list[ReportSection] = []

    def section(self, title: str) -> ReportSection:
        for s in self.sections:
            if s.title == title:
                return s
        s = ReportSection(title)
        self.sections.append(s)
        return s

    def render(self) -> str:
        out = [f"# {md_escape(self.title)}", ""]
        for s in self.sections:
            out.append(f"## {s.title}")
            out.append("")
            out.extend(s.lines)
        return "\n".join(out).rstrip() + "\n"

    def as_text(self) -> str:
        """A plain-text rendering for the terminal (Markdown is readable as is)."""
        return self.render()
