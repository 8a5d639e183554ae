"""Service settings: one typed object, read from ``HAARLINE_*`` environment variables.

=================================  ==========================================================
variable                           meaning (default)
=================================  ==========================================================
``HAARLINE_DATA_DIR``              directory of the SQLite file and nothing else (``./data``)
``HAARLINE_HOST``                  bind address (``127.0.0.1``)
``HAARLINE_PORT``                  port (``8000``)
``HAARLINE_WORKERS``               compute processes (number of CPU cores)
``HAARLINE_DASK_SCHEDULER``        address of a Dask scheduler; when set, work runs there
``HAARLINE_DEV_MODE``              ``1``: no API keys, loopback only, said loudly (``0``)
``HAARLINE_MAX_BODY_BYTES``        largest request body (``1048576``)
``HAARLINE_READ_TIMEOUT``          seconds a client may take to send a request's headers,
                                   and again its body (``30``); slower ones are cut off
``HAARLINE_MAX_COST``              largest estimated cost of one job, in amplitude-gate
                                   updates (``2e11``)
``HAARLINE_MAX_SCORE_COST``        the same for the synchronous score route (``2e8``)
``HAARLINE_SCORE_TIMEOUT``         seconds one score may take before it is stopped with a
                                   504 (``20``)
``HAARLINE_SCORE_WORKERS``         processes of the score route's own, beside the job
                                   workers; scores running at once (``1``)
``HAARLINE_MAX_MEMORY_BYTES``      largest working memory of one job (``2147483648``)
``HAARLINE_MEMORY_BUDGET``         memory for state batches per job (``1073741824``)
``HAARLINE_QUEUE_PER_KEY``         queued or running jobs one key may have (``16``)
``HAARLINE_MIN_FREE_BYTES``        free space on the data directory's disk below which
                                   ``/readyz`` answers 503 (``67108864``, 64 MiB)
``HAARLINE_RETRY_AFTER``           seconds a 503 suggests (a busy score estimates its own),
                                   and a 429 before any job has run (``5``); see
                                   :mod:`haarline.service.jobs.backoff`
``HAARLINE_PUBLIC_URL``            base URL used in links (``http://HOST:PORT``)
=================================  ==========================================================

An unsafe configuration refuses to start: development mode on anything but a loopback
address, a non-positive limit, or a data directory that cannot be created.
"""

from __future__ import annotations

import ipaddress
import os
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from haarline.service.errors import SettingsError
from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

__all__ = ["ENV_PREFIX", "Settings", "SettingsError"]

ENV_PREFIX = "HAARLINE_"


def _is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


class Settings(BaseModel):
    """Validated service configuration (see the module docstring for the variables)."""

    model_config = ConfigDict(extra="forbid", frozen=True)

    data_dir: Path = Path("data")
    host: str = "127.0.0.1"
    port: int = Field(default=8000, ge=1, le=65535)
    workers: int = Field(default_factory=lambda: os.cpu_count() or 1, ge=1, le=256)
    dask_scheduler: str | None = None
    dev_mode: bool = False
    max_body_bytes: int = Field(default=1_048_576, ge=1024)
    read_timeout: float = Field(default=30.0, gt=0, le=3600)
    max_cost: float = Field(default=2e11, gt=0)
    max_score_cost: float = Field(default=2e8, gt=0)
    score_timeout: float = Field(default=20.0, gt=0, le=600)
    score_workers: int = Field(default=1, ge=1, le=32)
    max_memory_bytes: int = Field(default=2 << 30, gt=0)
    memory_budget: int = Field(default=1 << 30, ge=1 << 20)
    queue_per_key: int = Field(default=16, ge=1)
    min_free_bytes: int = Field(default=64 << 20, ge=0)
    retry_after: int = Field(default=5, ge=1)
    public_url: str | None = None

    @model_validator(mode="after")
    def _safe(self) -> Settings:
        if self.dev_mode and not _is_loopback(self.host):
            raise ValueError(
                f"development mode serves without API keys and may only bind a loopback "
                f"address, not {self.host!r}"
            )
        return self

    @property
    def base_url(self) -> str:
        """Base URL for links in responses."""
        return (self.public_url or f"http://{self.host}:{self.port}").rstrip("/")

    @property
    def database(self) -> Path:
        """The one SQLite file under the data directory."""
        return self.data_dir / "haarline.sqlite3"

    @classmethod
    def from_env(cls, env: Mapping[str, str] | None = None, **overrides: Any) -> Settings:
        """Read ``HAARLINE_*`` variables (``overrides`` win), validate, create the data dir.

        Raises
        ------
        SettingsError
            Naming the variable and the problem.
        """
        env = os.environ if env is None else env
        raw: dict[str, Any] = {}
        for name in cls.model_fields:
            key = ENV_PREFIX + name.upper()
            if key in env and env[key] != "":
                raw[name] = env[key]
        raw.update({k: v for k, v in overrides.items() if v is not None})
        if "dev_mode" in raw and isinstance(raw["dev_mode"], str):
            flag = raw["dev_mode"].strip().lower()
            if flag not in ("0", "1", "true", "false", "yes", "no"):
                raise SettingsError(f"{ENV_PREFIX}DEV_MODE: expected 0 or 1, got {flag!r}")
            raw["dev_mode"] = flag in ("1", "true", "yes")
        try:
            settings = cls.model_validate(raw)
        except ValidationError as exc:
            lines = []
            for err in exc.errors(include_url=False):
                field = str(err["loc"][0]) if err["loc"] else ""
                where = ENV_PREFIX + field.upper() if field else "settings"
                lines.append(f"{where}: {err['msg'].removeprefix('Value error, ')}")
            raise SettingsError("; ".join(lines)) from None
        try:
            settings.data_dir.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise SettingsError(
                f"{ENV_PREFIX}DATA_DIR: cannot create {str(settings.data_dir)!r}: {exc.strerror}"
            ) from None
        return settings
