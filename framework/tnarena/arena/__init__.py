"""Head-to-head arena: every strategy setting on identical seeded instances.

study (TOML) -> seeds -> tasks run by an executor in worker processes -> store (SQLite)
-> summary (metrics against the reference) -> report (Markdown and PNG plots).
"""
