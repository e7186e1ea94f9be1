"""Reporters: pure functions of an immutable, sorted report."""
