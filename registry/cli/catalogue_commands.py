"""Commands on the catalogue: init, model, register, status, audit."""

from __future__ import annotations

COMMANDS: list = []
