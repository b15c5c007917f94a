"""Names people give things (models, datasets, stages, users): one plain, safe spelling.

Lower-case letters, digits, dots, dashes and underscores, starting with a letter or digit: safe in
URLs, file names of an export and shell commands, and never a path or markup.
"""

from __future__ import annotations

import re

from registry.errors import UserError

NAME_PATTERN = re.compile(r"^[a-z0-9][a-z0-9._-]{0,99}$")


def check_name(value: str, *, what: str) -> str:
    if not isinstance(value, str) or not NAME_PATTERN.fullmatch(value) or ".." in value:
        raise UserError(f"invalid {what} name {value!r}: use 1 to 100 lower-case letters, digits, "
                        "'.', '-' or '_', starting with a letter or digit", place=what)
    return value
