"""Reading and writing model files: the exactlp YAML format and MPS."""

from __future__ import annotations

import os

from ..limits import DEFAULT_LIMITS, Limits
from ..model import Model
from .mps import mps_from_text, read_mps
from .yaml_model import dump_yaml_model, load_yaml_model, model_from_text

MPS_SUFFIXES = (".mps", ".mps.gz", ".freemps", ".freemps.gz")


def is_mps(path: str | os.PathLike) -> bool:
    return os.fspath(path).lower().endswith(MPS_SUFFIXES)


def load(path: str | os.PathLike, limits: Limits = DEFAULT_LIMITS) -> Model:
    """Load a model from a YAML (``.yaml``/``.yml``) or MPS (``.mps``, ``.mps.gz``) file."""
    if is_mps(path):
        return read_mps(path, limits)
    return load_yaml_model(path, limits)


__all__ = ["load", "is_mps", "read_mps", "mps_from_text", "load_yaml_model", "model_from_text", "dump_yaml_model"]
