"""Shared numerics: polynomial helpers, Hurwitz screening, sum-of-squares certificates."""
