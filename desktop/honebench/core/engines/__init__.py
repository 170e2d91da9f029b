"""Model backends behind one small protocol (see base.py)."""
from .base import Engine, EngineError, Request, Result

__all__ = ["Engine", "EngineError", "Request", "Result"]
