"""Readers and writers. Files are written whole or not at all (see :mod:`amort.io.files`)."""
