"""A table that redraws only the rows that changed (Textual's line API), for views refreshed every second.

Textual's DataTable re-renders every visible cell after any change of one
cell; a channel board whose values and ages change each second then costs a
full table per refresh. Here each row is rendered once into a strip and kept
until its text changes, so a refresh costs what changed.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import ClassVar

from rich.style import Style
from rich.text import Text
from textual import events
from textual.binding import Binding, BindingType
from textual.geometry import Region, Size
from textual.message import Message
from textual.scroll_view import ScrollView
from textual.strip import Strip

__all__ = ["Column", "LiveTable"]

Column = tuple[str, Text, int]  # key, header, width in cells


def _same(a: Text | None, b: Text) -> bool:
    # Rich's Text equality ignores the text's own style: compare it too
    return a is not None and a.plain == b.plain and str(a.style) == str(b.style) and a.spans == b.spans


class LiveTable(ScrollView, can_focus=True):
    """Rows of fixed-width cells under one header line; a row cursor moved by keys (or a click)."""

    COMPONENT_CLASSES: ClassVar[set[str]] = {"live-table--header", "live-table--cursor"}
    DEFAULT_CSS = """
    LiveTable { height: 1fr; overflow-x: hidden; scrollbar-size-vertical: 1; }
    LiveTable > .live-table--header { text-style: bold; background: $primary-darken-2; }
    LiveTable > .live-table--cursor { background: $primary-darken-1; }
    LiveTable:focus > .live-table--cursor { background: $primary; }
    """
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("up", "move(-1)", "up", show=False),
        Binding("down", "move(1)", "down", show=False),
        Binding("pageup", "page(-1)", "page up", show=False),
        Binding("pagedown", "page(1)", "page down", show=False),
        Binding("home", "ends(0)", "first", show=False),
        Binding("end", "ends(1)", "last", show=False),
        Binding("enter", "select", "select", show=False),
    ]

    class RowHighlighted(Message):
        """The cursor moved to another row."""

        def __init__(self, table: LiveTable, row_key: str | None) -> None:
            super().__init__()
            self.table = table
            self.row_key = row_key

        @property
        def control(self) -> LiveTable:
            return self.table

    class RowSelected(Message):
        """Enter (or a click) on a row."""

        def __init__(self, table: LiveTable, row_key: str) -> None:
            super().__init__()
            self.table = table
            self.row_key = row_key

        @property
        def control(self) -> LiveTable:
            return self.table

    def __init__(self, **kw: object) -> None:
        super().__init__(**kw)  # type: ignore[arg-type]
        self._columns: list[Column] = []
        self._keys: list[str] = []
        self._cells: dict[str, dict[str, Text]] = {}
        self._strips: dict[str, Strip] = {}
        self._header: Strip | None = None
        self.cursor_row = 0

    # ------------------------------------------------------------ content

    @property
    def row_count(self) -> int:
        return len(self._keys)

    @property
    def highlighted_key(self) -> str | None:
        return self._keys[self.cursor_row] if 0 <= self.cursor_row < len(self._keys) else None

    def get_cell(self, row_key: str, column_key: str) -> Text:
        return self._cells[row_key][column_key]

    def set_columns(self, columns: Sequence[Column]) -> None:
        """New columns (and so every row drawn anew)."""
        self._columns = list(columns)
        self._strips.clear()
        self._header = None
        self._resize_virtual()
        self.refresh()

    def set_rows(self, rows: Sequence[tuple[str, dict[str, Text]]]) -> None:
        """The table's rows, in order; rows whose cells did not change are not drawn again."""
        keys = [k for k, _ in rows]
        reordered = keys != self._keys
        old_key = self.highlighted_key
        for key, cells in rows:
            before = self._cells.get(key)
            if before is None or len(before) != len(cells) or any(not _same(before.get(c), t) for c, t in cells.items()):
                self._cells[key] = cells
                self._strips.pop(key, None)
                if not reordered:
                    self._refresh_row(keys.index(key))
        for gone in set(self._cells) - set(keys):
            del self._cells[gone]
            self._strips.pop(gone, None)
        self._keys = keys
        if reordered:
            self._resize_virtual()
            self.refresh()
            if old_key in keys:
                self.cursor_row = keys.index(old_key)
            self.cursor_row = max(0, min(self.cursor_row, len(keys) - 1))

    def _resize_virtual(self) -> None:
        width = sum(w for _k, _h, w in self._columns)
        self.virtual_size = Size(width, len(self._keys) + 1)

    # ------------------------------------------------------------ drawing

    def notify_style_update(self) -> None:
        super().notify_style_update()
        self._strips.clear()
        self._header = None

    def on_resize(self, _event: events.Resize) -> None:
        self._strips.clear()
        self._header = None

    def _render_cells(self, cells: dict[str, Text] | None, base: Style) -> Strip:
        line = Text()
        for key, head, width in self._columns:
            cell = (head if cells is None else cells.get(key, Text(""))).copy()
            cell.truncate(width, pad=True)
            line.append_text(cell)
        console = self.app.console
        segments = list(line.render(console))
        return Strip(segments).apply_style(base)

    def _visible_rows(self) -> int:
        return max(0, self.size.height - 1)

    def _refresh_row(self, index: int) -> None:
        y = index - self.scroll_offset.y + 1
        if 1 <= y < self.size.height:
            self.refresh(Region(0, y, self.size.width, 1))

    def render_line(self, y: int) -> Strip:
        width = self.size.width
        base = self.rich_style
        if y == 0:
            if self._header is None:
                self._header = self._render_cells(None, base + self.get_component_rich_style("live-table--header"))
            return self._header.crop_extend(0, width, base + self.get_component_rich_style("live-table--header"))
        index = self.scroll_offset.y + y - 1
        if not 0 <= index < len(self._keys):
            return Strip.blank(width, base)
        key = self._keys[index]
        if index == self.cursor_row:
            style = base + self.get_component_rich_style("live-table--cursor")
            return self._render_cells(self._cells[key], style).crop_extend(0, width, style)
        strip = self._strips.get(key)
        if strip is None:
            strip = self._strips[key] = self._render_cells(self._cells[key], base)
        return strip.crop_extend(0, width, base)

    # ------------------------------------------------------------ the cursor

    def move_cursor(self, *, row: int) -> None:
        if not self._keys:
            return
        new = max(0, min(row, len(self._keys) - 1))
        if new == self.cursor_row:
            return
        old, self.cursor_row = self.cursor_row, new
        self._refresh_row(old)
        self._refresh_row(new)
        top = self.scroll_offset.y
        shown = self._visible_rows()
        if new < top:
            self.scroll_to(y=new, animate=False)
        elif shown and new >= top + shown:
            self.scroll_to(y=new - shown + 1, animate=False)
        self.post_message(self.RowHighlighted(self, self.highlighted_key))

    def watch_scroll_y(self, old: float, new: float) -> None:
        super().watch_scroll_y(old, new)
        self.refresh()

    def action_move(self, step: int) -> None:
        self.move_cursor(row=self.cursor_row + step)

    def action_page(self, step: int) -> None:
        self.move_cursor(row=self.cursor_row + step * max(1, self._visible_rows() - 1))

    def action_ends(self, end: int) -> None:
        self.move_cursor(row=(len(self._keys) - 1) if end else 0)

    def action_select(self) -> None:
        key = self.highlighted_key
        if key is not None:
            self.post_message(self.RowSelected(self, key))

    def on_click(self, event: events.Click) -> None:
        if event.y >= 1:
            index = self.scroll_offset.y + event.y - 1
            if 0 <= index < len(self._keys):
                if index == self.cursor_row and event.chain >= 2:
                    self.action_select()
                self.move_cursor(row=index)
