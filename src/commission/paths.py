"""Where things live: the register, identities and the trust store.

The register is found from ``--register PATH``, then ``COMMISSION_REGISTER``,
then the user data directory. Identities and trust live in the user config
directory, or in ``COMMISSION_HOME`` when it is set.
"""

from __future__ import annotations

import os
from pathlib import Path

APP = "commission"


def _expand(path: str | Path, where: str) -> Path:
    try:
        return Path(path).expanduser()
    except RuntimeError:  # '~nosuchuser/...'
        from .errors import UserError

        raise UserError(f"{where} {path}: no such user's home folder") from None


def register_path(option: str | Path | None = None) -> Path:
    if option:
        return _expand(option, "--register")
    env = os.environ.get("COMMISSION_REGISTER")
    if env:
        return _expand(env, "COMMISSION_REGISTER")
    from platformdirs import user_data_dir

    return Path(user_data_dir(APP, appauthor=False)) / "register.sqlite3"


def config_dir() -> Path:
    env = os.environ.get("COMMISSION_HOME")
    if env:
        return _expand(env, "COMMISSION_HOME")
    from platformdirs import user_config_dir

    return Path(user_config_dir(APP, appauthor=False))
