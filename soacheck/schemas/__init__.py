"""The JSON Schemas of every --json output, as installed files (written by tools/write_schemas.py)."""
