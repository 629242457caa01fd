"""Analysis by MNA: symbolic network functions, the numeric pencil, responses, sensitivities.

The public names load their module on first use (so that the command line
answers fast); ``__all__`` lists them all.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .dominant import (
        polished_roots,
        nearest_root_set,
        DominantFunction,
    )
    from .mna import (
        Stamp,
        Layout,
        layout,
        stamps,
        NumericSystem,
        numeric_system,
    )
    from .network import (
        S,
        NetworkFunction,
        network_function,
        SecondOrderFigures,
        circuit_poles,
        circuit_zeros,
        circuit_gain,
        circuit_roots,
        CircuitRoots,
        circuit_response,
        batched_roots,
        fraction_free_det,
        polynomial_values,
    )
    from .pencil import (
        CircuitRoots,
        circuit_roots,
        circuit_poles,
        circuit_zeros,
        circuit_gain,
        circuit_response,
    )
    from .response import (
        Response,
    )
    from .sensitivity import (
        Sensitivities,
        sensitivities,
    )

#: Public name -> the module of this folder that defines it.
_EXPORTS = {
    "polished_roots": "dominant",
    "nearest_root_set": "dominant",
    "DominantFunction": "dominant",
    "Stamp": "mna",
    "Layout": "mna",
    "layout": "mna",
    "stamps": "mna",
    "NumericSystem": "mna",
    "numeric_system": "mna",
    "S": "network",
    "NetworkFunction": "network",
    "network_function": "network",
    "SecondOrderFigures": "network",
    "circuit_poles": "network",
    "circuit_zeros": "network",
    "circuit_gain": "network",
    "circuit_roots": "network",
    "CircuitRoots": "network",
    "circuit_response": "network",
    "batched_roots": "network",
    "fraction_free_det": "network",
    "polynomial_values": "network",
    "CircuitRoots": "pencil",
    "circuit_roots": "pencil",
    "circuit_poles": "pencil",
    "circuit_zeros": "pencil",
    "circuit_gain": "pencil",
    "circuit_response": "pencil",
    "Response": "response",
    "Sensitivities": "sensitivity",
    "sensitivities": "sensitivity",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(f".{module}", __name__), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return list(__all__)
