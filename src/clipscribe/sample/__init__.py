"""The invented sample scenario (a robot arm moving blocks on a workbench)."""

from .build import build_sample

__all__ = ["build_sample"]
