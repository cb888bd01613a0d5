"""Run directories and file output (every write atomic)."""
