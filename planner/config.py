"""Settings read from the environment (``PLANNER_*``), shared by the web app, the CLI and Alembic.

Variables:

- ``PLANNER_DATABASE_URL``: SQLAlchemy URL. Default: a SQLite file
  ``<instance>/planner.sqlite3``. A school points this at its PostgreSQL
  server, e.g. ``postgresql+psycopg://user@host/dbname``.
- ``PLANNER_INSTANCE_DIR``: where local state lives (SQLite file, generated
  development secret key). Default: ``<repository>/instance``; created on demand.
- ``PLANNER_SECRET_KEY``: signs session cookies and CSRF tokens. Default: a
  random key generated once and kept in ``<instance>/secret_key`` (fine for a
  single machine; set it explicitly when several workers or hosts serve the app).
- ``PLANNER_SEED_DIR``: the demo scenario directory. Default: ``<repository>/seed_demo``.
- ``PLANNER_SECURE_COOKIES``: ``1``/``true``/``yes``/``on`` marks the session and
  remember cookies ``Secure`` (sent over https only). Turn it on whenever the app
  is served over https (behind a proxy that terminates TLS, too). Default: off.
"""

from __future__ import annotations

import os
import secrets
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parent.parent


@dataclass(frozen=True)
class Settings:
    """Everything the app needs to know about its surroundings."""

    database_url: str
    secret_key: str
    instance_dir: Path
    seed_dir: Path
    # Pin "today" (ISO date) for demos and tests; None reads the clock in the pilot's time zone.
    today: str | None = None
    # Cookies carry the Secure flag (https only).
    secure_cookies: bool = False

    @classmethod
    def from_env(cls, environ: Mapping[str, str] | None = None) -> Settings:
        """Read the settings from ``environ`` (default: ``os.environ``)."""
        env = os.environ if environ is None else environ
        instance_dir = Path(env.get("PLANNER_INSTANCE_DIR") or REPO_ROOT / "instance")
        url = env.get("PLANNER_DATABASE_URL")
        if not url:
            instance_dir.mkdir(parents=True, exist_ok=True)
            url = f"sqlite:///{instance_dir / 'planner.sqlite3'}"
        secret = env.get("PLANNER_SECRET_KEY") or _persisted_secret(instance_dir)
        seed_dir = Path(env.get("PLANNER_SEED_DIR") or REPO_ROOT / "seed_demo")
        return cls(
            database_url=url,
            secret_key=secret,
            instance_dir=instance_dir,
            seed_dir=seed_dir,
            today=env.get("PLANNER_TODAY") or None,
            secure_cookies=_flag(env.get("PLANNER_SECURE_COOKIES")),
        )


def _flag(value: str | None) -> bool:
    """An on/off environment variable (unset or empty is off)."""
    return (value or "").strip().lower() in ("1", "true", "yes", "on")


def _persisted_secret(instance_dir: Path) -> str:
    """A development secret key kept in the instance directory (generated on first use)."""
    path = instance_dir / "secret_key"
    try:
        key = path.read_text(encoding="utf-8").strip()
        if key:
            return key
    except FileNotFoundError:
        pass
    instance_dir.mkdir(parents=True, exist_ok=True)
    # Several workers may start at once: each writes a candidate to its own file and links it into place,
    # which succeeds for exactly one; everyone then uses the key on disk. Owner-only: the key signs sessions.
    candidate = instance_dir / f".secret_key.{os.getpid()}.{secrets.token_hex(4)}"
    fd = os.open(candidate, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    with os.fdopen(fd, "w", encoding="utf-8") as fh:
        fh.write(secrets.token_hex(32) + "\n")
    try:
        os.link(candidate, path)
    except FileExistsError:
        pass
    finally:
        candidate.unlink()
    return path.read_text(encoding="utf-8").strip()
