"""Choosing and loading the engines: the engine bar (the graded engine and the project's
generation settings), the endpoint dialog, the remembered choices, and the handle jobs use
an open engine through."""
from .bar import EngineBar
from .endpoint_dialog import EndpointDialog
from .handle import EngineHandle, open_engine

__all__ = ["EngineBar", "EndpointDialog", "EngineHandle", "open_engine"]
