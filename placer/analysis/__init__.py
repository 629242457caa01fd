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
        minor_expansion_det,
    )
    from .network import (
        S,
        NetworkFunction,
        network_function,
        circuit_poles,
        circuit_zeros,
        circuit_gain,
        circuit_roots,
        CircuitRoots,
        circuit_response,
        batched_roots,
        polynomial_values,
    )
    from .noise import (
        BOLTZMANN,
        DEFAULT_TEMPERATURE,
        NoiseSources,
        NoiseSpectrum,
        NoiseContribution,
        NoiseAnalysis,
        noise_sources,
        noise_spectrum,
        noise_grid,
        integrate_density,
        analyse_noise,
        is_model_resistor,
        opamp_input_coefficient,
    )
    from .pencil import (
        CircuitRoots,
        circuit_roots,
        circuit_poles,
        natural_frequencies,
        circuit_zeros,
        circuit_gain,
        circuit_response,
        pencil_eigenvalues,
    )
    from .protocols import (
        ComplexArray,
        FloatArray,
        PartFunction,
        PartValues,
        RootTargets,
        RootedFunction,
    )
    from .response import (
        Response,
    )
    from .return_ratio import (
        PHASE_MARGIN_FLOOR_DEG,
        OpampLoop,
        output_pin,
        with_load_capacitance,
        return_ratio,
        return_ratio_coefficients,
        phase_margin_of,
        opamp_loop,
        opamp_loops,
    )
    from .second_order import (
        SecondOrderFigures,
        omega0_q,
        first_order_omega,
        zero_pair_omega,
        passband_gain,
        pair_figures,
        dominant_pair,
    )
    from .sensitivity import (
        Sensitivities,
        sensitivities,
        FigureReference,
        figure_reference,
        coefficient_figures,
        check_has_poles,
        nominal_values,
        is_real_number,
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
    "minor_expansion_det": "mna",
    "S": "network",
    "NetworkFunction": "network",
    "network_function": "network",
    "circuit_poles": "pencil",
    "circuit_zeros": "pencil",
    "circuit_gain": "pencil",
    "circuit_roots": "pencil",
    "CircuitRoots": "pencil",
    "circuit_response": "pencil",
    "batched_roots": "network",
    "polynomial_values": "network",
    "BOLTZMANN": "noise",
    "DEFAULT_TEMPERATURE": "noise",
    "NoiseSources": "noise",
    "NoiseSpectrum": "noise",
    "NoiseContribution": "noise",
    "NoiseAnalysis": "noise",
    "noise_sources": "noise",
    "noise_spectrum": "noise",
    "noise_grid": "noise",
    "integrate_density": "noise",
    "analyse_noise": "noise",
    "is_model_resistor": "noise",
    "opamp_input_coefficient": "noise",
    "natural_frequencies": "pencil",
    "pencil_eigenvalues": "pencil",
    "ComplexArray": "protocols",
    "FloatArray": "protocols",
    "PartFunction": "protocols",
    "PartValues": "protocols",
    "RootTargets": "protocols",
    "RootedFunction": "protocols",
    "Response": "response",
    "PHASE_MARGIN_FLOOR_DEG": "return_ratio",
    "OpampLoop": "return_ratio",
    "output_pin": "return_ratio",
    "with_load_capacitance": "return_ratio",
    "return_ratio": "return_ratio",
    "return_ratio_coefficients": "return_ratio",
    "phase_margin_of": "return_ratio",
    "opamp_loop": "return_ratio",
    "opamp_loops": "return_ratio",
    "SecondOrderFigures": "second_order",
    "omega0_q": "second_order",
    "first_order_omega": "second_order",
    "zero_pair_omega": "second_order",
    "passband_gain": "second_order",
    "pair_figures": "second_order",
    "dominant_pair": "second_order",
    "Sensitivities": "sensitivity",
    "sensitivities": "sensitivity",
    "FigureReference": "sensitivity",
    "figure_reference": "sensitivity",
    "coefficient_figures": "sensitivity",
    "check_has_poles": "sensitivity",
    "nominal_values": "sensitivity",
    "is_real_number": "sensitivity",
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
