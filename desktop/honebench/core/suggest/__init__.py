"""Suggestions: strategies propose variant wordings; one pipeline cleans, de-duplicates and
scores them on tuning items. Held-out items never reach this package."""
