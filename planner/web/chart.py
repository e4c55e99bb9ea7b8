"""The timeline chart: inline SVG drawn on the server (no scripts, no external resources).

One row per requirement (and scope) with a band per stretch of one state,
each band filled with its own pattern as well as its own colour and labelled
in words when wide enough; a marker at every deadline (last valid day, end of
the regain stage); a line at today; a marker at each planned (what-if) date.
Every band and marker carries a ``<title>``, and the chart a ``<title>`` and
``<desc>`` summarising it, so the chart reads without colour or sight.

Only presentation attributes are used (no ``style``), which the page's
Content-Security-Policy allows.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from datetime import date, timedelta

from markupsafe import Markup, escape

from planner.core import currency

WIDTH = 960
LABEL_W = 250
RIGHT_PAD = 12
AXIS_H = 34
ROW_H = 30
BAND_H = 18
FOOT_H = 22
LABEL_CHARS = 38

# Our own palette: each state also has its own fill pattern and a word on the band.
_FILL = {
    currency.CURRENT: ("#2e6b4f", "url(#tl-current)", "#ffffff"),
    currency.GRACE: ("#c98a12", "url(#tl-grace)", "#1d2430"),
    currency.LAPSED: ("#9b2f2f", "url(#tl-lapsed)", "#ffffff"),
}
_WORD = {currency.CURRENT: "current", currency.GRACE: "grace", currency.LAPSED: "lapsed"}

_DEFS = """<defs>
<pattern id="tl-current" width="8" height="8" patternUnits="userSpaceOnUse">
<rect width="8" height="8" fill="#2e6b4f"/></pattern>
<pattern id="tl-grace" width="8" height="8" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">
<rect width="8" height="8" fill="#f0c25a"/><rect width="3" height="8" fill="#c98a12"/></pattern>
<pattern id="tl-lapsed" width="8" height="8" patternUnits="userSpaceOnUse">
<rect width="8" height="8" fill="#9b2f2f"/><path d="M0 0L8 8M8 0L0 8" stroke="#e8b4b4" stroke-width="1.2"/></pattern>
</defs>"""


def _months(start: date, end: date) -> list[date]:
    out = []
    day = date(start.year, start.month, 1)
    if day < start:
        day = date(day.year + (day.month == 12), day.month % 12 + 1, 1)
    while day <= end:
        out.append(day)
        day = date(day.year + (day.month == 12), day.month % 12 + 1, 1)
    return out


def render(
    report: currency.TimelineReport,
    as_of: date,
    *,
    label: Callable[[currency.RequirementTimeline], str],
    planned: Sequence[date] = (),
    chart_id: str = "timeline",
) -> Markup:
    """The SVG for ``report`` (start..end inclusive), with today at ``as_of``.

    ``label`` names a row in words; ``planned`` are the dates of hypothetical entries.
    """
    start, end = report.start, report.end
    total = (end - start).days + 1
    plot_w = WIDTH - LABEL_W - RIGHT_PAD
    rows = report.requirements
    height = AXIS_H + ROW_H * max(len(rows), 1) + FOOT_H

    def x(day: date) -> float:
        offset = min(max((day - start).days, 0), total)
        return round(LABEL_W + offset * plot_w / total, 1)

    parts: list[str] = []
    summary = [
        f"Timeline from {start.isoformat()} to {end.isoformat()}, today {as_of.isoformat()}."
    ]
    title_id, desc_id = f"{chart_id}-title", f"{chart_id}-desc"
    parts.append(
        f'<svg xmlns="http://www.w3.org/2000/svg" class="timeline" viewBox="0 0 {WIDTH} {height}" '
        f'role="img" aria-labelledby="{title_id} {desc_id}" preserveAspectRatio="xMinYMin meet">'
    )
    parts.append(f'<title id="{title_id}">Currency timeline, past 18 months and next 6</title>')
    desc_at = len(parts)
    parts.append("")  # the description, filled in once the rows are known
    parts.append(_DEFS)

    # Month grid and axis labels (every third month labelled).
    for i, month in enumerate(_months(start, end)):
        mx = x(month)
        parts.append(f'<line x1="{mx}" y1="{AXIS_H - 6}" x2="{mx}" y2="{height - FOOT_H}" stroke="#e4e0d6" stroke-width="1"/>')
        if month.month % 3 == 1:
            parts.append(f'<text x="{mx + 2}" y="{AXIS_H - 12}" font-size="11" fill="#5a6472">{month.strftime("%Y-%m")}</text>')

    for r_i, row in enumerate(rows):
        y = AXIS_H + r_i * ROW_H
        band_y = y + (ROW_H - BAND_H) / 2
        full = label(row)
        short = full if len(full) <= LABEL_CHARS else full[: LABEL_CHARS - 1].rstrip() + "…"
        parts.append(f'<g class="tl-row"><title>{escape(full)}</title>')
        parts.append(
            f'<text x="6" y="{band_y + BAND_H - 4}" font-size="12" fill="#1d2430">{escape(short)}</text>'
        )
        # Stretches of one state (a new entry moving a date inside a stretch does not split it).
        stretches: list[tuple[currency.StateChange, date]] = []
        for c_i, change in enumerate(row.changes):
            until = row.changes[c_i + 1].date - timedelta(days=1) if c_i + 1 < len(row.changes) else end
            if stretches and stretches[-1][0].state == change.state:
                stretches[-1] = (stretches[-1][0], until)
            else:
                stretches.append((change, until))
        for change, until in stretches:
            x0, x1 = x(change.date), x(until + timedelta(days=1))
            solid, pattern, ink = _FILL[change.state]
            word = _WORD[change.state]
            tip = f"{full}: {word} from {change.date.isoformat()} to {until.isoformat()}"
            if change.state != currency.CURRENT and change.regain_with:
                tip += f" (regain with {change.regain_with}"
                tip += f" until {change.regain_by.isoformat()})" if change.regain_by else ")"
            parts.append(
                f'<rect class="tl-band tl-{word}" x="{x0}" y="{band_y}" width="{max(x1 - x0, 0.5)}" height="{BAND_H}" '
                f'fill="{pattern}" stroke="{solid}" stroke-width="0.5"><title>{escape(tip)}</title></rect>'
            )
            if x1 - x0 >= 46:
                parts.append(
                    f'<text x="{x0 + 4}" y="{band_y + BAND_H - 5}" font-size="11" fill="{ink}" '
                    f'font-weight="600" aria-hidden="true">{word}</text>'
                )
        # Deadlines: where a period of currency ended (or will end), and the end of a regain stage.
        deadlines: dict[date, str] = {}
        for i, (change, until) in enumerate(stretches):
            if change.state == currency.CURRENT and (i + 1 < len(stretches) or until == end):
                stand = row.at(until)
                if stand.valid_through and start <= stand.valid_through <= end:
                    deadlines[stand.valid_through] = "last valid day"
            reached = i + 1 == len(stretches) or (change.regain_by is not None and change.regain_by <= until)
            if reached and change.regain_by and start <= change.regain_by <= end:
                deadlines[change.regain_by] = "end of regain with tasks"
        for day, what in sorted(deadlines.items()):
            dx = x(day + timedelta(days=1))
            parts.append(
                f'<path class="tl-deadline" d="M{dx} {band_y - 4} l-4 -5 h8 z M{dx} {band_y - 4} V{band_y + BAND_H + 2}" '
                f'fill="#1d2430" stroke="#1d2430" stroke-width="1.5"><title>{escape(f"{full}: {what} {day.isoformat()}")}</title></path>'
            )
        parts.append("</g>")
        now = row.at(as_of) if row.changes and row.changes[0].date <= as_of else None
        if now is not None:
            text = f"{full}: {_WORD[now.state]} today"
            if now.valid_through:
                text += f", last valid day {now.valid_through.isoformat()}"
            if now.regain_by:
                text += f", regain with tasks until {now.regain_by.isoformat()}"
            summary.append(text + ".")

    bottom = height - FOOT_H
    if start <= as_of <= end:
        tx = x(as_of)
        parts.append(
            f'<g class="tl-today"><title>Today {as_of.isoformat()}</title>'
            f'<line x1="{tx}" y1="{AXIS_H - 8}" x2="{tx}" y2="{bottom}" stroke="#1d2430" stroke-width="2" stroke-dasharray="5 3"/>'
            f'<text x="{tx + 3}" y="{bottom + 15}" font-size="11" fill="#1d2430" font-weight="700">today</text></g>'
        )
    for day in sorted(set(planned)):
        if start <= day <= end:
            px = x(day)
            parts.append(
                f'<g class="tl-planned"><title>Planned (what-if) {day.isoformat()}</title>'
                f'<line x1="{px}" y1="{AXIS_H - 8}" x2="{px}" y2="{bottom}" stroke="#2f4a9b" stroke-width="2" stroke-dasharray="2 2"/>'
                f'<text x="{px + 3}" y="{AXIS_H - 1}" font-size="11" fill="#2f4a9b" font-weight="700">planned</text></g>'
            )
            summary.append(f"Planned entry on {day.isoformat()}.")
    parts[desc_at] = f'<desc id="{desc_id}">{escape(" ".join(summary))}</desc>'
    parts.append("</svg>")
    return Markup("".join(parts))
