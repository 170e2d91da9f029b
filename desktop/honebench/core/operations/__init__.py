"""The project's operations, grouped by what they act on. ``core.project.Project`` combines
them; each user act is one method returning ``Done(value, changes)`` (see core/changes.py)."""
