"""The server's settings: one frozen record, built by the caller (CLI or test), never at import."""

from __future__ import annotations

import ipaddress
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

MIB = 1024 * 1024
TOKEN_ENV = "BODYCENSUS_TOKEN"
MIN_TOKEN_LENGTH = 12  # common practice: long enough that guessing over the network is hopeless


@dataclass(frozen=True)
class Settings:
    """Where data lives, where to listen, and the limits every upload must respect."""

    data_dir: Path
    host: str = "127.0.0.1"  # loopback only unless a token is set (see ``listen_problem``)
    port: int = 8000
    token: str | None = None  # access token: every request needs it; required off loopback
    max_upload_bytes: int = 4096 * MIB  # bytes on the wire, enforced while streaming (413)
    max_decompressed_bytes: int = 16384 * MIB  # refuses gzip/zstd bombs past this size
    max_rows: int = 50_000_000  # data rows in one catalogue
    max_columns: int = 2_000  # columns in one catalogue
    demo: bool = False  # ensure the bundled demo catalogue exists at start-up
    workers: int = 2  # ingest threads; 2 suits a 2-core machine shared with readers
    allowed_hosts: tuple[str, ...] = ()  # Host names accepted besides loopback (no token)

    @classmethod
    def from_cli(cls, *, data_dir: Path | None, token: str | None = None,
                 **options: Any) -> Settings:
        """Settings for ``bodycensus serve``: an absolute data dir (``default_data_dir()``
        when none is given), the token from ``BODYCENSUS_TOKEN`` when the option is not given."""
        token = token or os.environ.get(TOKEN_ENV) or None
        folder = Path(data_dir) if data_dir is not None else default_data_dir()
        return cls(data_dir=folder.resolve(), token=token, **options)

    def listen_problem(self) -> str | None:
        """Why the server must not start with these settings (None when it may)."""
        if self.token is not None and len(self.token) < MIN_TOKEN_LENGTH:
            return (f"the access token is shorter than {MIN_TOKEN_LENGTH} characters; "
                    "use a longer one")
        if self.token is None and not is_loopback(self.host):
            return (f"refusing to listen on {self.host} without an access token; pass --token or "
                    f"set {TOKEN_ENV}, or listen on 127.0.0.1")
        return None


def default_data_dir() -> Path:
    """Where catalogues live unless told: ``$BODYCENSUS_DATA``, else the user's data folder
    (``$XDG_DATA_HOME/bodycensus``, by default ``~/.local/share/bodycensus``); never the
    working directory, so the server finds the same catalogues wherever it is started."""
    if os.environ.get("BODYCENSUS_DATA"):
        return Path(os.environ["BODYCENSUS_DATA"])
    base = os.environ.get("XDG_DATA_HOME") or Path.home() / ".local" / "share"
    return Path(base) / "bodycensus"


def is_loopback(host: str) -> bool:
    """Whether ``host`` only listens on this machine."""
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False
