"""The v0.1.0 engine, kept as the benchmark baseline (never used by reports or surveys)."""
