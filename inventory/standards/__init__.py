"""Standard tables shipped as package data (CSV), each opening with a ``# source:`` line.

Read them through :mod:`inventory.bench.sizes`, never by path.
"""
