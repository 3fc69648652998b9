"""File formats: pure parsers and writers (no database, no network).

Each reader module keeps file access (`read_*(path)`) apart from parsing (`parse_*(text, *, name)`).
"""
