"""The log: every byte stored goes through here, and all SQL lives here.

The store (SQLite or PostgreSQL behind one dialect boundary), its schema and
migrations, running totals, the imports, backups and copies, the log's
settings and its accounts."""
