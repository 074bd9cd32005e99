"""Turning file contents into parseable Python: decoding, notebooks, waiver comments."""
