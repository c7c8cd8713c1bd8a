"""Run tables and their metadata: reading, validation, series."""
