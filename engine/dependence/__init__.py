"""Stated rank correlations: the matrix or structure, its checks and its repair."""
