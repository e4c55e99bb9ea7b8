"""Read a rendered HTML form back into the data a browser would post (inputs, checked boxes, selected options, text areas)."""

from __future__ import annotations

from html.parser import HTMLParser


class _FormReader(HTMLParser):
    def __init__(self, form_id: str) -> None:
        super().__init__(convert_charrefs=True)
        self.form_id, self.inside, self.data = form_id, False, {}
        self._select: str | None = None
        self._textarea: str | None = None

    def handle_starttag(self, tag: str, attrs: list) -> None:  # type: ignore[override]
        a = dict(attrs)
        if tag == "form" and a.get("id") == self.form_id:
            self.inside = True
        if not self.inside:
            return
        name = a.get("name")
        if tag == "input" and name and a.get("type") not in ("submit", "button"):
            if a.get("type") == "checkbox":
                if "checked" in a:
                    self.data[name] = a.get("value") or "y"
            else:
                self.data[name] = a.get("value") or ""
        elif tag == "select" and name:
            self._select = name
        elif tag == "option" and self._select and "selected" in a:
            self.data[self._select] = a.get("value") or ""
        elif tag == "textarea" and name:
            self._textarea = name
            self.data[name] = ""

    def handle_data(self, data: str) -> None:
        if self._textarea:
            self.data[self._textarea] += data

    def handle_endtag(self, tag: str) -> None:
        if tag == "select":
            self._select = None
        elif tag == "textarea":
            self._textarea = None
        elif tag == "form":
            self.inside = False


def form_fields(page: str, form_id: str) -> dict[str, str]:
    """The values of the form with ``id=form_id`` as they would be posted."""
    reader = _FormReader(form_id)
    reader.feed(page)
    return reader.data
