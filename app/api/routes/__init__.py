"""One router module per resource; `app.api.main` includes them under /v1 (health at the root)."""
