"""The headless core: everything that computes. Imports no Qt (a test enforces it)."""
