"""Database layer: tables (app.db.tables), engine/session (app.db.session), migrations (app.db.migrate)."""
