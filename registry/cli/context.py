"""What every command shares: the catalogue URL, the acting user, and the open catalogue."""

from __future__ import annotations

import getpass
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from registry.cli.client import CatalogueClient


@dataclass
class CommandContext:
    db_url: str | None = None
    acting_user: str | None = None
    server: str | None = None
    token: str | None = field(default=None, repr=False)
    _catalogue: Any = field(default=None, repr=False)
    _client: CatalogueClient | None = field(default=None, repr=False)

    @property
    def user(self) -> str:
        if self.acting_user:
            return self.acting_user
        try:
            return getpass.getuser()
        except Exception:  # no login name in some containers
            return "unknown"

    def client(self) -> CatalogueClient:
        """The catalogue the commands act on: the server named by --server, or the local
        catalogue (opened on first use). Chosen once, here; no command asks which it got."""
        if self._client is None:
            if self.server:
                from registry.cli.remote import ApiClient
                from registry.cli.remote_catalogue import RemoteCatalogue

                self._client = RemoteCatalogue(ApiClient(self.server, self.token))
            else:
                from registry.cli.local import LocalCatalogue

                self._client = LocalCatalogue(self.catalogue, self.user)
        return self._client

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
