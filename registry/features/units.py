"""UCUM unit codes: parse them and compare two of them (same unit, convertible by what, or not).

The codes are parsed by ucumvert, which builds its grammar from the UCUM essence file published
with the standard and maps every UCUM atom onto a pint unit; pint then does the arithmetic. We
chose it over ucumate (bindings to a Java library) because it is pure Python, needs no Java
runtime started inside our process, and builds on pint, which the project already uses; its own
caveat (definitions still under review) is why the conversion factors we rely on are tested
against NIST Special Publication 811.
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass
from typing import Any

from registry.errors import Unprocessable


class UnknownUnit(Unprocessable):
    """A unit code that is not valid UCUM."""


# UCUM specification, section 2.4 (annotations): curly braces hold an annotation, which does not
# change the unit's meaning as a quantity; "{count}" alone means the unity.
_ANNOTATION = re.compile(r"\{[^{}]*\}")


@dataclass(frozen=True)
class Unit:
    """A parsed UCUM code: the code as written, its dimensions and its annotations."""

    code: str
    dimensions: str  # pint's dimensionality, e.g. "[mass] / [length] / [time] ** 2"
    annotations: tuple[str, ...]
    has_offset: bool  # a temperature scale such as Cel or [degF]


@dataclass(frozen=True)
class UnitComparison:
    """How values in one unit relate to values in another: new = factor * old + offset."""

    old: str
    new: str
    same_code: bool
    convertible: bool
    factor: float | None
    offset: float | None
    annotations_differ: bool

    @property
    def is_same_unit(self) -> bool:
        """The same unit in another spelling (m/s and m.s-1): nothing about the values changes."""
        return (self.convertible and self.factor == 1.0 and not self.offset
                and not self.annotations_differ)


@functools.cache
def _ucum() -> tuple[Any, Any]:
    """The pint registry with the UCUM definitions and a parser that builds pint quantities.

    Built once per process: loading the definitions and the grammar takes about half a second.
    """
    from ucumvert import PintUcumRegistry, UcumToPintTransformer, get_ucum_parser

    registry = PintUcumRegistry()
    transformer = UcumToPintTransformer(ureg=registry)
    return registry, (get_ucum_parser(), transformer)


def _quantity(code: str, place: str | None) -> Any:
    from lark.exceptions import LarkError, VisitError
    from pint.errors import OffsetUnitCalculusError, PintError
    from ucumvert import parse_ucum

    registry, (parser, transformer) = _ucum()
    if not isinstance(code, str) or not code.strip():
        raise UnknownUnit("a unit must be a non-empty UCUM code (use \"1\" for a pure number)",
                          place=place)
    try:
        value = transformer.transform(parse_ucum(code, parser))
    except VisitError as error:
        if isinstance(error.orig_exc, OffsetUnitCalculusError):
            raise UnknownUnit(
                f"{code!r} combines a temperature scale with other units; UCUM's special units "
                "(Cel, [degF]) stand alone, so write a rate as K/h", place=place) from None
        raise UnknownUnit(f"{code!r} is not a UCUM unit code", place=place) from None
    except (LarkError, PintError, ValueError):
        raise UnknownUnit(f"{code!r} is not a UCUM unit code (codes are case-sensitive: kPa, "
                          "[psi], Cel, {count})", place=place) from None
    if not hasattr(value, "units"):  # an annotation alone, such as "{count}", is the unity
        value = registry.Quantity(1, "dimensionless")
    return value


def parse_unit(code: str, *, place: str | None = None) -> Unit:
    """Parse a UCUM code, or raise UnknownUnit naming the place it came from."""
    quantity = _quantity(code, place)
    return Unit(
        code=code,
        dimensions=str(quantity.dimensionality),
        annotations=tuple(_ANNOTATION.findall(code)),
        has_offset=_has_offset(quantity),
    )


def _has_offset(quantity: Any) -> bool:
    """A temperature scale: its zero is not the zero of its base unit (0 Cel is 273.15 K)."""
    registry, _ = _ucum()
    return bool(registry.Quantity(0, quantity.units).to_base_units().magnitude != 0)


def _significant(value: float) -> float:
    """Round away the binary noise pint's arithmetic leaves (1.7999999999999998 for 1.8)."""
    if value == 0 or not math.isfinite(value):
        return value
    return float(f"{value:.12g}")


def compare_units(old: str, new: str) -> UnitComparison:
    """Compare two UCUM codes: how a value in `old` becomes a value in `new`, if it can."""
    old_quantity = _quantity(old, None)
    new_quantity = _quantity(new, None)
    annotations_differ = sorted(_ANNOTATION.findall(old)) != sorted(_ANNOTATION.findall(new))
    if old_quantity.dimensionality != new_quantity.dimensionality:
        return UnitComparison(old, new, old == new, False, None, None, annotations_differ)
    registry, _ = _ucum()
    # Convert two points so that temperature scales (an offset as well as a factor) are exact:
    # new(x) = factor * x + offset.
    scale = old_quantity.magnitude

    def convert(x: float) -> float:
        quantity = registry.Quantity(x * scale, old_quantity.units)
        return float(quantity.to(new_quantity.units).magnitude) / new_quantity.magnitude

    at_zero = convert(0.0)
    factor = _significant(convert(1.0) - at_zero)
    offset = _significant(at_zero)
    return UnitComparison(old, new, old == new, True, factor, offset, annotations_differ)
