"""Reports: result dictionaries for JSON, terminal tables, cautions."""
