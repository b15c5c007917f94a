"""How a version is named on the command line: `MODEL@N`, or MODEL and `N` / `vN` apart."""

from __future__ import annotations

from registry.errors import UserError


def version_number(text: str, *, place: str = "VERSION") -> int:
    """`3` or `v3` as the number 3."""
    digits = text[1:] if text[:1] in ("v", "V") else text
    if not digits.isdigit() or int(digits) < 1:
        raise UserError(f"{text!r} is not a version number (give 3 or v3)", place=place)
    return int(digits)


def model_and_version(model: str, version: str | None) -> tuple[str, int | None]:
    """Split `MODEL@N` when the version is given that way; the version may be absent."""
    if "@" in model:
        name, _, number = model.partition("@")
        if version is not None:
            raise UserError("give the version once: MODEL@N or MODEL N", place="VERSION")
        return name, version_number(number)
    return model, None if version is None else version_number(version)
