"""The typed, frozen model of a spec (format v1), with every quantity in SI."""

from .build import build, model_at
from .spec import Spec

__all__ = ["Spec", "build", "model_at"]
