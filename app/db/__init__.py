"""Database layer: tables (app.db.tables), engine/session (app.db.session), migrations (app.db.migrate),
the data version every change bumps (app.db.version)."""

from app.db import version as version  # noqa: E402  (installs the session events that bump it)
