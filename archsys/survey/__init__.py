"""Survey: batch analysis of catalogues and population inference."""

__all__ = []
