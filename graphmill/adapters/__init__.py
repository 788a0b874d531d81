"""Adapters from a bundle to other libraries' graph objects (each an optional extra)."""
