"""Run-length engine: how long a monitoring scheme runs before it signals."""
