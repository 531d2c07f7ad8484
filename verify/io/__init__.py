"""Input stage: case files (TOML + CSV tables) and claimed force tables (CSV / .xlsx)."""
