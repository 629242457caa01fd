"""Analysis by MNA: symbolic network functions, the numeric pencil, responses, sensitivities."""

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

__all__ = [
    "polished_roots",
    "nearest_root_set",
    "DominantFunction",
    "Stamp",
    "Layout",
    "layout",
    "stamps",
    "NumericSystem",
    "numeric_system",
    "S",
    "NetworkFunction",
    "network_function",
    "SecondOrderFigures",
    "circuit_poles",
    "circuit_zeros",
    "circuit_gain",
    "circuit_roots",
    "CircuitRoots",
    "circuit_response",
    "batched_roots",
    "fraction_free_det",
    "polynomial_values",
    "CircuitRoots",
    "circuit_roots",
    "circuit_poles",
    "circuit_zeros",
    "circuit_gain",
    "circuit_response",
    "Response",
    "Sensitivities",
    "sensitivities",
]
