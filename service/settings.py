"""Service settings: one typed object, read from ``HAARLINE_*`` environment variables.

=================================  ==========================================================
variable                           meaning (default)
=================================  ==========================================================
``HAARLINE_DATA_DIR``              directory of the SQLite file and nothing else (``./data``)
``HAARLINE_HOST``                  bind address (``127.0.0.1``)
``HAARLINE_PORT``                  port (``8000``)
``HAARLINE_WORKERS``               compute processes (number of CPU cores)
``HAARLINE_DASK_SCHEDULER``        address of a Dask scheduler, ``tcp://HOST:PORT``; when
                                   set, work runs on its cluster (also the default of the
                                   CLI's ``--dask``)
``HAARLINE_DASK_UNIT``             what one Dask task is: ``job`` (a whole job; the workers
                                   must share the data directory) or ``block`` (jobs run in
                                   the service's own processes and send the sampled blocks
                                   of each analysis to the cluster) (``job``)
``HAARLINE_DEV_MODE``              ``1``: no API keys, loopback only, said loudly (``0``)
``HAARLINE_MAX_BODY_BYTES``        largest request body (``1048576``)
``HAARLINE_READ_TIMEOUT``          seconds a client may take to send a request's headers,
                                   and again its body (``30``); slower ones are cut off
``HAARLINE_MAX_WORK``              largest estimated work of one job, in amplitude-gate
                                   updates (``2e11``)
``HAARLINE_MAX_SCORE_WORK``        the same for the synchronous score route (``2e8``)
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
``HAARLINE_PAGE_SECRET``           the key that signs share links (default: 32 random bytes
                                   created once in ``DATA_DIR/page-secret``); changing it
                                   ends every link given out
``HAARLINE_SHARE_MAX_DAYS``        longest lifetime of a share link, in days (``90``)
``HAARLINE_RETENTION_DAYS``        delete finished jobs, with their results and plots, this
                                   many days after they finished (unset: keep them)
``HAARLINE_SHARED_RESULT_CACHE``   ``1``: a request identical to one *any* key has run is
                                   answered from that stored result (``0``: only the same
                                   key's results are reused). Sharing saves work but tells a
                                   key that another key analysed the same circuit with the
                                   same options and seed: turn it on only where every key
                                   belongs to one team
``HAARLINE_CORS_ORIGINS``          comma-separated origins (``https://wiki.example.org``)
                                   whose pages may call the API from a browser (unset: none)
``HAARLINE_WEBHOOK_LOOPBACK``      ``1``: a ``callback_url`` may name a loopback address
                                   (``127.0.0.0/8``, ``::1``), over http too (``0``;
                                   development mode allows loopback anyway)
``HAARLINE_WEBHOOK_NETWORKS``      comma-separated networks (``10.20.0.0/16``) that
                                   callbacks may reach although they are not public
                                   (unset: only public addresses)
``HAARLINE_WEBHOOK_HTTP``          ``1``: plain ``http://`` callbacks to any allowed
                                   address (``0``: https only, except to loopback)
``HAARLINE_WEBHOOK_RETRY_DELAYS``  comma-separated seconds between a notification's
                                   attempts (``5,300,1800,7200,18000,36000,36000``: eight
                                   attempts over about 28 hours)
``HAARLINE_WEBHOOK_TIMEOUT``       seconds one attempt may take to connect, and again to
                                   get the answer (``10``)
=================================  ==========================================================

Callbacks go to ``https`` URLs whose host resolves only to public addresses: every address
the host resolves to is checked (:mod:`haarline.service.jobs.destinations`), when the job
is submitted and again before each attempt.

An unsafe configuration refuses to start: development mode on anything but a loopback
address, a non-positive limit, a data directory that cannot be created, an origin that is
not ``scheme://host[:port]``, a webhook network that is not ``address/prefix``, a retry
delay that is not above 0 and at most a day, or a variable of an older release that was renamed
(``HAARLINE_MAX_COST``: the error names its new name; it is never read silently).

This is a plain pydantic model read by :meth:`Settings.from_env` rather than
pydantic-settings: every variable is one flat string, tests pass a mapping instead of the
process environment, and the start-up errors name the variable as the operator typed it;
the few lines here do exactly that without another dependency.
"""

from __future__ import annotations

import ipaddress
import os
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any, Literal

from haarline.engine.cluster import check_address
from haarline.errors import OptionError
from haarline.service.errors import SettingsError
from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    SecretStr,
    ValidationError,
    field_validator,
    model_validator,
)

__all__ = ["ENV_PREFIX", "RENAMED", "Settings", "SettingsError", "dask_scheduler_from_env"]

ENV_PREFIX = "HAARLINE_"

RENAMED = {"MAX_COST": "MAX_WORK", "MAX_SCORE_COST": "MAX_SCORE_WORK"}
"""Variables of earlier releases and their new names (the estimate is called "work")."""

_FLAGS = ("dev_mode", "shared_result_cache", "webhook_loopback", "webhook_http")
_LISTS = ("cors_origins", "webhook_networks", "webhook_retry_delays")
_ORIGIN = re.compile(r"https?://[A-Za-z0-9.\-\[\]:]+")


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
    dask_unit: Literal["job", "block"] = "job"
    dev_mode: bool = False
    max_body_bytes: int = Field(default=1_048_576, ge=1024)
    read_timeout: float = Field(default=30.0, gt=0, le=3600)
    max_work: float = Field(default=2e11, gt=0)
    max_score_work: float = Field(default=2e8, gt=0)
    score_timeout: float = Field(default=20.0, gt=0, le=600)
    score_workers: int = Field(default=1, ge=1, le=32)
    max_memory_bytes: int = Field(default=2 << 30, gt=0)
    memory_budget: int = Field(default=1 << 30, ge=1 << 20)
    queue_per_key: int = Field(default=16, ge=1)
    min_free_bytes: int = Field(default=64 << 20, ge=0)
    retry_after: int = Field(default=5, ge=1)
    public_url: str | None = None
    page_secret: SecretStr | None = Field(default=None, min_length=16)
    share_max_days: float = Field(default=90.0, gt=0, le=3650)
    retention_days: float | None = Field(default=None, gt=0, le=36_500)
    shared_result_cache: bool = False
    cors_origins: tuple[str, ...] = ()
    webhook_loopback: bool = False
    webhook_networks: tuple[str, ...] = ()
    webhook_http: bool = False
    webhook_retry_delays: tuple[float, ...] = Field(
        default=(5, 300, 1800, 7200, 18000, 36000, 36000), min_length=1, max_length=20
    )
    webhook_timeout: float = Field(default=10.0, gt=0, le=120)

    @field_validator("dask_scheduler")
    @classmethod
    def _address(cls, value: str | None) -> str | None:
        if value is None:
            return None
        try:
            return check_address(value.strip())
        except OptionError as exc:
            raise ValueError(exc.problems[0].message) from None

    @model_validator(mode="after")
    def _safe(self) -> Settings:
        if self.dev_mode and not _is_loopback(self.host):
            raise ValueError(
                f"development mode serves without API keys and may only bind a loopback "
                f"address, not {self.host!r}"
            )
        if self.dask_unit == "block" and self.dask_scheduler is None:
            raise ValueError(
                "dask_unit: 'block' sends blocks to a Dask cluster; set "
                f"{ENV_PREFIX}DASK_SCHEDULER too, or use 'job' (the default)"
            )
        for origin in self.cors_origins:
            if not _ORIGIN.fullmatch(origin):
                raise ValueError(
                    f"cors_origins: {origin!r} is not an origin; expected scheme://host[:port] "
                    "such as https://wiki.example.org (no path, no wildcard)"
                )
        for network in self.webhook_networks:
            try:
                ipaddress.ip_network(network)
            except ValueError as exc:
                raise ValueError(
                    f"webhook_networks: {network!r} is not a network ({exc}); expected "
                    "an address with a prefix length such as 10.20.0.0/16 or fd00::/8"
                ) from None
        for delay in self.webhook_retry_delays:
            if not 0 < delay <= 86_400:
                raise ValueError(
                    f"webhook_retry_delays: {delay:g} s is out of range; each delay must be "
                    "above 0 and at most 86400 (a day)"
                )
        return self

    @property
    def callback_networks(self) -> tuple[ipaddress.IPv4Network | ipaddress.IPv6Network, ...]:
        """``HAARLINE_WEBHOOK_NETWORKS`` as network objects."""
        return tuple(ipaddress.ip_network(n) for n in self.webhook_networks)

    @property
    def callback_loopback(self) -> bool:
        """Whether callbacks may go to loopback (development mode, or the setting)."""
        return self.dev_mode or self.webhook_loopback

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
        for old, new in RENAMED.items():
            if env.get(ENV_PREFIX + old, "") != "":
                raise SettingsError(
                    f"{ENV_PREFIX}{old} was renamed {ENV_PREFIX}{new} (the estimate is called "
                    f"work now); set {ENV_PREFIX}{new} instead and remove {ENV_PREFIX}{old}"
                )
        raw: dict[str, Any] = {}
        for name in cls.model_fields:
            key = ENV_PREFIX + name.upper()
            if key in env and env[key] != "":
                raw[name] = env[key]
        raw.update({k: v for k, v in overrides.items() if v is not None})
        for name in _LISTS:
            if isinstance(raw.get(name), str):
                raw[name] = tuple(o.strip() for o in raw[name].split(",") if o.strip())
        for name in _FLAGS:
            if isinstance(raw.get(name), str):
                flag = raw[name].strip().lower()
                if flag not in ("0", "1", "true", "false", "yes", "no"):
                    raise SettingsError(
                        f"{ENV_PREFIX}{name.upper()}: expected 0 or 1, got {flag!r}"
                    )
                raw[name] = flag in ("1", "true", "yes")
        try:
            settings = cls.model_validate(raw)
        except ValidationError as exc:
            lines = []
            for err in exc.errors(include_url=False):
                field = str(err["loc"][0]) if err["loc"] else ""
                where = ENV_PREFIX + field.upper() if field else "settings"
                message = err["msg"].removeprefix("Value error, ")
                for name in (*_LISTS, "dask_unit"):
                    if message.startswith(f"{name}: "):
                        where, message = ENV_PREFIX + name.upper(), message[len(name) + 2 :]
                lines.append(f"{where}: {message}")
            raise SettingsError("; ".join(lines)) from None
        try:
            settings.data_dir.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise SettingsError(
                f"{ENV_PREFIX}DATA_DIR: cannot create {str(settings.data_dir)!r}: {exc.strerror}"
            ) from None
        return settings


def dask_scheduler_from_env(env: Mapping[str, str] | None = None) -> str | None:
    """``HAARLINE_DASK_SCHEDULER`` alone, checked: the CLI's default for ``--dask``.

    The command line reads no other variable (the rest configure the server), and reading
    this one creates no data directory.

    Raises
    ------
    SettingsError
        Naming the variable, its value and the accepted form.
    """
    env = os.environ if env is None else env
    value = env.get(ENV_PREFIX + "DASK_SCHEDULER", "").strip()
    if not value:
        return None
    try:
        return check_address(value, ENV_PREFIX + "DASK_SCHEDULER")
    except OptionError as exc:
        raise SettingsError(str(exc)) from None
