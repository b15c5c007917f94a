"""What every command shares: the catalogue URL, the acting user, and the open catalogue."""

from __future__ import annotations

import getpass
from dataclasses import dataclass, field
from typing import Any


@dataclass
class CommandContext:
    db_url: str | None = None
    acting_user: str | None = None
    server: str | None = None
    token: str | None = field(default=None, repr=False)
    _catalogue: Any = field(default=None, repr=False)

    @property
    def user(self) -> str:
        if self.acting_user:
            return self.acting_user
        try:
            return getpass.getuser()
        except Exception:  # no login name in some containers
            return "unknown"

    def remote(self) -> Any:
        """The HTTP client of the remote catalogue named by --server, or None to work locally."""
        if not self.server:
            return None
        from registry.cli.remote import ApiClient

        return ApiClient(self.server, self.token)

    def local_only(self, command: str) -> None:
        if self.server:
            from registry.errors import UserError

            raise UserError(f"`{command}` works on a local catalogue only; drop --server",
                            place="--server")

    def catalogue(self) -> Any:
        """Open the catalogue on first use, so catalogue-free commands never touch a database."""
        if self._catalogue is None:
            from registry.store.catalogue import open_catalogue

            self._catalogue = open_catalogue(self.db_url)
        return self._catalogue

    def close(self) -> None:
        if self._catalogue is not None:
            self._catalogue.close()
            self._catalogue = None
