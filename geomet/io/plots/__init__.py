"""PNG plots: functions that take tables and return matplotlib figures (no science)."""
