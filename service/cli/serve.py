"""The ``haarline serve`` and ``haarline keys`` commands."""

from __future__ import annotations

import argparse
import datetime as dt
import logging
import re
import sys
from typing import Any

from haarline.service.errors import SettingsError

__all__ = ["add_commands"]


def _settings(args: argparse.Namespace, **extra: Any) -> Any:
    from haarline.service.settings import Settings

    return Settings.from_env(data_dir=getattr(args, "data_dir", None), **extra)


class RedactTokens(logging.Filter):
    """Hide share tokens (``?token=…``) in access-log lines; they open a report page."""

    _TOKEN = re.compile(r"([?&]token=)[^&\s\"]+")

    def filter(self, record: logging.LogRecord) -> bool:
        """Rewrite the record's arguments with tokens replaced by ``REDACTED``."""
        if record.args:
            record.args = tuple(
                self._TOKEN.sub(r"\1REDACTED", a) if isinstance(a, str) else a
                for a in (record.args if isinstance(record.args, tuple) else (record.args,))
            )
        return True


def _cmd_serve(args: argparse.Namespace) -> int:
    import uvicorn
    from haarline.service.api.app import create_app
    from haarline.service.api.protocol import guarded_protocol
    from haarline.service.errors import StoreUnavailable

    settings = _settings(
        args,
        host=args.host,
        port=args.port,
        workers=args.workers,
        dev_mode=True if args.dev else None,
    )
    url = settings.base_url
    out = sys.stderr
    if settings.dev_mode:
        out.write(
            "\n  *** DEVELOPMENT MODE: no API keys are checked. Loopback only. ***\n"
            "  *** Do not expose this server; use `haarline keys add NAME` and drop --dev. ***\n\n"
        )
    out.write(f"  haarline service at {url}\n")
    out.write(f"  interactive API docs: {url}/docs   (OpenAPI document: {url}/openapi.json)\n")
    auth = "" if settings.dev_mode else ' -H "Authorization: Bearer $HAARLINE_KEY"'
    out.write(
        f"  try:  curl -s{auth} -H 'Content-Type: application/json' "
        f'-d \'{{"reference": "ry-cz-ring", "options": {{"pairs": 1000}}}}\' {url}/v1/score\n'
    )
    out.write(f"  data directory: {settings.data_dir.resolve()}\n\n")
    out.flush()
    try:
        app = create_app(settings)
    except StoreUnavailable as exc:
        raise SettingsError(f"HAARLINE_DATA_DIR: {settings.database}: {exc}") from None
    logging.getLogger("uvicorn.access").addFilter(RedactTokens())
    uvicorn.run(
        app,
        host=settings.host,
        port=settings.port,
        log_level=args.log_level,
        http=guarded_protocol(settings.read_timeout),  # uvicorn has no header deadline
    )
    return 0


def _cmd_keys(args: argparse.Namespace) -> int:
    from haarline.service.api.keys import issue_key
    from haarline.service.errors import StoreUnavailable
    from haarline.service.jobs.store import Store

    settings = _settings(args)
    store = Store(settings.database)
    try:
        store.initialize()
    except StoreUnavailable as exc:
        raise SettingsError(f"HAARLINE_DATA_DIR: {settings.database}: {exc}") from None
    if args.action == "add":
        key_id, key = issue_key(store, args.name)
        sys.stdout.write(f"{key}\n")
        sys.stderr.write(
            f"haarline: key {key_id} ({args.name}) created; it is shown once and stored only "
            "as a hash\n"
        )
        return 0
    if args.action == "list":
        for k in store.list_keys():
            when = dt.datetime.fromtimestamp(k["created"], dt.UTC).strftime("%Y-%m-%d")
            state = "revoked" if k["revoked"] else "active"
            sys.stdout.write(f"{k['id']}  {state:<7}  {when}  {k['name']}\n")
        return 0
    if store.revoke_key(args.key_id):
        sys.stderr.write(f"haarline: key {args.key_id} revoked\n")
        return 0
    sys.stderr.write(f"haarline: error: no active key {args.key_id!r}\n")
    return 2


def add_commands(sub: Any) -> None:
    """Register ``serve`` and ``keys`` on the CLI's sub-parsers."""
    p = sub.add_parser("serve", help="run the REST service")
    p.add_argument("--host", help="bind address (default 127.0.0.1, or HAARLINE_HOST)")
    p.add_argument("--port", type=int, help="port (default 8000, or HAARLINE_PORT)")
    p.add_argument("--data-dir", help="data directory (default ./data, or HAARLINE_DATA_DIR)")
    p.add_argument("--workers", type=int, help="compute processes (default: CPU cores)")
    p.add_argument(
        "--dev", action="store_true", help="development mode: no API keys, loopback only"
    )
    p.add_argument(
        "--log-level", default="info", choices=["critical", "error", "warning", "info", "debug"]
    )
    p.set_defaults(func=_cmd_serve)

    data_dir = "data directory (default ./data, or HAARLINE_DATA_DIR)"
    p = sub.add_parser("keys", help="manage the service's API keys")
    p.add_argument("--data-dir", help=data_dir)
    actions = p.add_subparsers(dest="action", required=True, metavar="ACTION")
    a = actions.add_parser("add", help="create a key and print it once")
    a.add_argument("name", help="who or what the key is for")
    listing = actions.add_parser("list", help="list keys (ids, names, state; never the keys)")
    r = actions.add_parser("revoke", help="revoke a key by id")
    r.add_argument("key_id")
    # --data-dir also after the action (`keys add bot --data-dir D`); SUPPRESS keeps an
    # absent one from overwriting the value given before the action
    for action in (a, listing, r):
        action.add_argument("--data-dir", default=argparse.SUPPRESS, help=data_dir)
    p.set_defaults(func=_cmd_keys)
