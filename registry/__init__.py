"""Lockkeeper: a model release registry with lineage and promotion gates."""

__version__ = "0.1.0"
