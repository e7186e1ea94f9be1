"""Data package: shipped inside the wheel, read through importlib.resources."""
