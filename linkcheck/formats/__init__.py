"""Readers and writers of robot description formats. Only this package touches XML."""
