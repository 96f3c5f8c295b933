"""Reading and writing: system files, tables, atomic output files."""

__all__ = []
