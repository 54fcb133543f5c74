"""Building Rich text cell by cell without one style span per cell.

The drawings (window section, chart, guide track, fill bar) decide a glyph and a
style for every cell; handing Textual one span per cell makes each redraw cost
tens of milliseconds. :class:`CellText` merges runs of equal style into one span.
"""

from __future__ import annotations

from rich.text import Text


class CellText:
    """Accumulate (text, style) pieces; :meth:`text` merges equal neighbours."""

    def __init__(self) -> None:
        self._parts: list[tuple[str, str]] = []

    def append(self, text: str, style: str = "") -> None:
        if not text:
            return
        if self._parts and self._parts[-1][1] == style:
            prev, _ = self._parts[-1]
            self._parts[-1] = (prev + text, style)
        else:
            self._parts.append((text, style))

    def append_text(self, other: Text) -> None:
        for span_text, style in _pieces(other):
            self.append(span_text, style)

    def text(self) -> Text:
        out = Text(no_wrap=True, overflow="crop")
        for chunk, style in self._parts:
            out.append(chunk, style or None)
        return out

    @property
    def parts(self) -> list[tuple[str, str]]:
        """The merged (text, style) runs so far."""
        return list(self._parts)

    def __len__(self) -> int:
        return len(self._parts)


def _pieces(t: Text) -> list[tuple[str, str]]:
    """(text, style) pieces of a Text whose spans do not overlap (as built here)."""
    plain = t.plain
    out: list[tuple[str, str]] = []
    pos = 0
    for span in sorted(t.spans, key=lambda s: s.start):
        if span.start > pos:
            out.append((plain[pos:span.start], ""))
        out.append((plain[span.start:span.end], str(span.style)))
        pos = span.end
    if pos < len(plain):
        out.append((plain[pos:], ""))
    return out
