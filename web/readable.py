"""Template filters that make stored values readable: times to the second with their offset,
UCUM codes as the symbols or names people use, numbers at a sensible precision."""

from __future__ import annotations

import re
from datetime import datetime
from typing import Any

from markupsafe import Markup, escape

from registry.service.queries.reports import plain_number
from web import blueprint

# UCUM print symbols, or plain names where the symbol is itself a code people misread
# (UCUM specification, tables of base units and derived units: "a" is the Julian year).
UNIT_WORDS = {
    "a": "years", "Cel": "degrees Celsius", "[psi]": "psi", "{count}": "count", "1": "ratio",
    "%": "percent", "d": "days", "h": "hours", "min": "minutes", "s": "seconds",
    "[degF]": "degrees Fahrenheit", "L/h": "litres per hour", "m3/h": "m³/h",
}
_ANNOTATION = re.compile(r"\{([^{}]*)\}")
_BRACKETS = re.compile(r"\[([^\[\]]*)\]")


def unit_words(code: Any) -> str:
    if not isinstance(code, str) or not code:
        return ""
    if code in UNIT_WORDS:
        return UNIT_WORDS[code]
    text = _BRACKETS.sub(lambda m: m.group(1).replace("_", " "), code)
    return _ANNOTATION.sub(lambda m: m.group(1), text)


@blueprint.app_template_filter("unit")
def unit(code: Any) -> Markup:
    """The readable unit, with the stored code in a tooltip when the two differ."""
    words = unit_words(code)
    if not words:
        return Markup('<span class="muted">no unit</span>')
    if words == code:
        return escape(words)
    return Markup('<abbr title="UCUM code {}">{}</abbr>').format(code, words)


@blueprint.app_template_filter("when")
def when(stamp: Any) -> str:
    """ISO 8601 to the second, with its offset: 2026-03-02 09:00:00 +00:00."""
    if not stamp:
        return "—"
    try:
        moment = datetime.fromisoformat(str(stamp))
    except ValueError:
        return str(stamp)
    offset = moment.strftime("%z")
    offset = f" {offset[:3]}:{offset[3:]}" if offset else ""
    return moment.strftime("%Y-%m-%d %H:%M:%S") + offset


@blueprint.app_template_filter("figure")
def figure(value: Any) -> str:
    return plain_number(value)


@blueprint.app_template_filter("signed")
def signed(value: Any) -> str:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or value != value:
        return "—"
    return ("+" if value > 0 else "") + plain_number(value)


@blueprint.app_template_filter("percent")
def percent(value: Any) -> str:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return "—"
    return f"{value * 100:.1f}%"
