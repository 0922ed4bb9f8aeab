"""Data model: measured quantities, the system-file schema and reader."""

__all__ = []
