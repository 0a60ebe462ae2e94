"""Small text formats shared by the terminal tables."""


def clock(iso: str | None) -> str:
    """HH:MM from a local ISO time, or a dash."""
    return iso[11:16] if iso else "—"


def span(start_iso: str | None, end_iso: str | None) -> str:
    """A local window HH:MM–HH:MM, with UTC offsets when the clocks change inside it."""
    from auroraplan.render.style import time_span

    return time_span(start_iso, end_iso)


def print_notes(out, result) -> bool:
    """Print a report's notes under its heading; False when every site is closed (nothing
    follows then, only that one line)."""
    from auroraplan.escape import markup as m

    for assumed in result.get("what_if") or []:
        out.print(f"[bold magenta]what-if:[/] {m(assumed)} (this run only; nothing saved)")
    if result.get("closed_note"):
        out.print(f"[bold]{m(result['closed_note'])}[/]", soft_wrap=True)
        return False
    if result.get("forecast"):
        out.print(f"[dim]{m(result['forecast']['note'])}[/]")
    if result.get("cloud_note"):
        out.print(f"[dim]{m(result['cloud_note'])}[/]", soft_wrap=True)
    if result.get("darkness_note"):
        out.print(f"[bold]{m(result['darkness_note'])}[/]", soft_wrap=True)
    return True


def chance_cell(chance, plain=False) -> str:
    """A chance as a percentage, bold when good; 'n/a' without data."""
    if chance is None:
        return "n/a"
    text = f"{100 * chance:.0f}%"
    if plain:
        return text
    if chance >= 0.45:
        return f"[bold]{text}[/]"
    return text if chance >= 0.10 else f"[dim]{text}[/]"


def kind_mark(kind: str) -> str:
    """A mark after a night that is an outlook rather than a forecast."""
    return {"forecast": "", "outlook": " *", "none": " ?"}.get(kind, "")


def short_date(iso_date: str) -> str:
    """'Tue 12 Jan' from '2027-01-12'."""
    import datetime as dt

    return dt.date.fromisoformat(iso_date).strftime("%a %d %b")


def outing_words(info) -> str:
    """'outings 17:40–02:40 (from magnetic midnight) · ' for the header, or ''."""
    if not info or not info.get("hours") or info["hours"] == "none":
        return ""
    how = " (from magnetic midnight)" if info.get("derived") else ""
    return f"outings {info['hours']}{how} · "
