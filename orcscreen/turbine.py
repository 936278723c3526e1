"""Turbine figures: size parameter, volume ratio, and the efficiency model object.

The cycle never takes a bare turbine efficiency: it asks a model object, so that an efficiency
correlated with the size parameter and the volume ratio can replace the constant later without
touching the cycle code.

Sources:
    Macchi, E., Perdichizzi, A. (1981), "Efficiency prediction for axial-flow turbines operating
    with nonconventional fluids", J. Eng. Power 103(4) 718-724, doi:10.1115/1.3230794:
    size parameter SP = sqrt(V_out_s) / dh_s**0.25 [m] and volume ratio VR = v_out_s / v_in.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Protocol

__all__ = ["TurbineModel", "ConstantEfficiency", "size_parameter_m", "volume_ratio", "TURBINE_MODELS", "DEFAULT_TURBINE_MODEL"]


def size_parameter_m(V_out_s_m3_s: float, dh_s_J_kg: float) -> float:
    """Size parameter SP = sqrt(V_out_s) / dh_s^0.25 [m] (Macchi and Perdichizzi 1981).

    V_out_s_m3_s: volume flow at the isentropic outlet state [m3/s]; dh_s_J_kg: isentropic
    enthalpy drop [J/kg]. Returns NaN when the drop is not positive.
    """
    if dh_s_J_kg <= 0.0 or V_out_s_m3_s <= 0.0:
        return math.nan
    return math.sqrt(V_out_s_m3_s) / dh_s_J_kg**0.25


def volume_ratio(v_out_s_m3_kg: float, v_in_m3_kg: float) -> float:
    """Volume ratio VR = v_out_s / v_in [-] across the expansion (Macchi and Perdichizzi 1981)."""
    return v_out_s_m3_kg / v_in_m3_kg


class TurbineModel(Protocol):
    """What the cycle asks of a turbine model."""

    name: str

    def efficiency(self, size_parameter_m: float, volume_ratio: float) -> float:
        """Isentropic efficiency [-] for the given size parameter [m] and volume ratio [-]."""
        ...

    @classmethod
    def from_settings(cls, machines) -> TurbineModel:
        """The model built from a study's [machines] section (typed section model)."""
        ...


@dataclass(frozen=True)
class ConstantEfficiency:
    """A fixed isentropic efficiency, whatever the size of the machine (the study's setting)."""

    value: float
    name: str = "constant"

    def __post_init__(self):
        if not 0.0 < self.value <= 1.0:
            raise ValueError(f"turbine efficiency {self.value} is outside (0, 1]")

    def efficiency(self, size_parameter_m: float = math.nan, volume_ratio: float = math.nan) -> float:
        return self.value

    @classmethod
    def from_settings(cls, machines) -> ConstantEfficiency:
        """The model of a study's [machines] section: its turbine_efficiency."""
        return cls(machines.turbine_efficiency)


#: Registry of turbine efficiency models by name (one place: the study's machines.turbine_model
#: allows these names, and the engine builds the model with the class's from_settings).
TURBINE_MODELS = {"constant": ConstantEfficiency}
#: The model a study uses when it names none.
DEFAULT_TURBINE_MODEL = "constant"
