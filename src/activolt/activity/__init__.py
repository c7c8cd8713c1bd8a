"""Activity-coefficient models, one module per published family, and their registry.

Each module defines ``MODEL``, an :class:`~activolt.activity.base.ActivityModel`. Add a family by
writing its module and listing it in :data:`MODELS` (see DEVELOPERS.md).
"""

from __future__ import annotations

from . import davies, hueckel, limiting, pitzer, sit
from .base import ActivityModel, Parameter

#: Every model by its command-line name.
MODELS: dict[str, ActivityModel] = {
    m.name: m
    for m in (limiting.MODEL, hueckel.MODEL, davies.MODEL, sit.MODEL, pitzer.MODEL)
}


def get_model(name: str) -> ActivityModel:
    """The model called ``name``; ``ValueError`` listing the valid names otherwise.

    Examples
    --------
    >>> get_model("hueckel").title
    'Hückel equation'
    """
    try:
        return MODELS[name]
    except KeyError:
        raise ValueError(
            f"unknown model '{name}'; choose one of: {', '.join(MODELS)}"
        ) from None


__all__ = ["MODELS", "ActivityModel", "Parameter", "get_model"]
