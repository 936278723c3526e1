"""Turbine figures (size parameter, volume ratio) and the efficiency models, one registry.

The cycle never takes a bare turbine efficiency: it asks a model object. A model's
:meth:`design` turns the turbine's size parameter and volume ratio into a :class:`TurbineDesign`
(efficiency, stage count, the figures per stage, warnings, or the reason no turbine fits). A
model whose efficiency depends on the size (``size_dependent``) makes each cycle evaluation a
fixed point, since the size parameter depends on the working-fluid flow, and the flow (through
the condenser and a recuperator) on the efficiency (:mod:`orcscreen.cycles.base`).

Sources:
    Macchi, E., Perdichizzi, A. (1981), "Efficiency prediction for axial-flow turbines operating
    with nonconventional fluids", J. Eng. Power 103(4) 718-724, doi:10.1115/1.3230794:
    size parameter SP = sqrt(V_out_s) / dh_s**0.25 [m] (V_out_s in m3/s at the isentropic outlet
    state, dh_s in J/kg) and volume ratio VR = v_out_s / v_in.
    Astolfi, M., Macchi, E. (2015), "Efficiency correlations for axial flow turbines working with
    non-conventional fluids", 3rd International Seminar on ORC Power Systems, Brussels, paper 83;
    the same correlation in Macchi, E., Astolfi, M. (eds.), *Organic Rankine Cycle (ORC) Power
    Systems*, Woodhead/Elsevier 2017, ch. 9, Table 9.1 (see :class:`AxialAstolfiMacchi`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar, Protocol

__all__ = [
    "TurbineModel",
    "TurbineDesign",
    "ConstantEfficiency",
    "AxialAstolfiMacchi",
    "size_parameter_m",
    "volume_ratio",
    "TURBINE_MODELS",
    "DEFAULT_TURBINE_MODEL",
]


def size_parameter_m(V_out_s_m3_s: float, dh_s_J_kg: float) -> float:
    """Size parameter SP = sqrt(V_out_s) / dh_s^0.25 [m] (Macchi and Perdichizzi 1981).

    V_out_s_m3_s: volume flow at the isentropic outlet state [m3/s]; dh_s_J_kg: isentropic
    enthalpy drop [J/kg] (in kJ/kg the result would be 1000**0.25 = 5.62 times too large).
    Returns NaN when the drop or the flow is not positive.
    """
    if dh_s_J_kg <= 0.0 or V_out_s_m3_s <= 0.0:
        return math.nan
    return math.sqrt(V_out_s_m3_s) / dh_s_J_kg**0.25


def volume_ratio(v_out_s_m3_kg: float, v_in_m3_kg: float) -> float:
    """Volume ratio VR = v_out_s / v_in [-] across the expansion (Macchi and Perdichizzi 1981)."""
    return v_out_s_m3_kg / v_in_m3_kg


@dataclass(frozen=True)
class TurbineDesign:
    """What a turbine model makes of a size parameter and a volume ratio.

    efficiency [-]; stages (NaN where the model knows none); vr_per_stage = VR^(1/stages) [-];
    warnings: soft limits passed (the result stands); reason: why no turbine of the model fits
    (a hard limit: the case is infeasible), else "".
    """

    efficiency: float
    stages: float = math.nan
    vr_per_stage: float = math.nan
    warnings: tuple[str, ...] = ()
    reason: str = ""


class TurbineModel(Protocol):
    """What the cycle asks of a turbine model."""

    name: str
    #: True when the efficiency depends on the size parameter (a fixed point per evaluation)
    size_dependent: bool
    #: study keys (dotted paths) only this model reads; the study refuses them with another model
    own_keys: tuple[str, ...]

    def efficiency(self, size_parameter_m: float, volume_ratio: float) -> float:
        """Isentropic efficiency [-] for the given size parameter [m] and volume ratio [-]."""
        ...

    def design(self, size_parameter_m: float, volume_ratio: float, min_stages: int = 1) -> TurbineDesign:
        """Efficiency, stages (at least min_stages where the model counts them), warnings or the
        reason no turbine fits."""
        ...

    @classmethod
    def from_settings(cls, machines, limits) -> TurbineModel:
        """The model built from a study's [machines] and [limits] sections (typed section models)."""
        ...


@dataclass(frozen=True)
class ConstantEfficiency:
    """A fixed isentropic efficiency, whatever the size of the machine (the study's setting):
    the model of textbook cycles and of every result before the size-dependent models."""

    value: float
    name: str = "constant"
    size_dependent: ClassVar[bool] = False
    #: study keys (dotted paths) only this model reads; a study naming another model may not set them
    own_keys: ClassVar[tuple[str, ...]] = ("machines.turbine_efficiency",)

    def __post_init__(self):
        if not 0.0 < self.value <= 1.0:
            raise ValueError(f"turbine efficiency {self.value} is outside (0, 1]")

    def efficiency(self, size_parameter_m: float = math.nan, volume_ratio: float = math.nan) -> float:
        return self.value

    def design(self, size_parameter_m: float = math.nan, volume_ratio: float = math.nan, min_stages: int = 1) -> TurbineDesign:
        return TurbineDesign(self.value)

    @classmethod
    def from_settings(cls, machines, limits=None) -> ConstantEfficiency:
        """The model of a study's [machines] section: its turbine_efficiency."""
        return cls(machines.turbine_efficiency)


#: Coefficients A_0..A_15 of the axial-turbine efficiency correlation for 1, 2 and 3 stages
#: (Astolfi and Macchi 2015; Macchi and Astolfi 2017, Table 9.1), on the terms
#: 1, x, x^2, x^3, x^4, VR, y, y^2, y^3, y^4, y x, y^2 x, y x^2, y^3 x, y^3 x^2, y^2 x^3 with
#: x = ln(SP [m]) and y = ln(VR). As transcribed in secondary copies (six of them agree digit
#: for digit); a stored copy of paper 83 could be read only as far as its abstract and
#: introduction (which confirm the form: 1-3 stages, equivalent single-stage SP, total VR), so
#: the digits are as read in the secondary copies.
_AXIAL_COEFFICIENTS: dict[int, tuple[float, ...]] = {
    1: (0.90831500, -0.05248690, -0.04799080, -0.01710380, -0.00244002, 0.0, 0.04961780, -0.04894860,
        0.01171650, -0.00100473, 0.05645970, -0.01859440, 0.01288860, 0.00178187, -0.00021196, 0.00078667),
    2: (0.923406, -0.0221021, -0.0233814, -0.00844961, -0.0012978, -0.00069293, 0.0146911, -0.0102795,
        0.0, 0.000317241, 0.0163959, -0.00515265, 0.00358361, 0.000554726, 0.0, 0.000293607),
    3: (0.932274, -0.01243, -0.018, -0.00716, -0.00118, -0.00044, 0.0, 0.0,
        -0.0016, 0.000298, 0.005959, -0.00163, 0.001946, 0.000163, 0.0, 0.000211),
}


def axial_efficiency_astolfi_macchi(stages: int, size_parameter_m: float, volume_ratio: float) -> float:
    """Total-to-static efficiency [-] of an axial turbine of 1, 2 or 3 stages at its optimal speed.

    eta = sum_i A_i F_i with x = ln(SP), y = ln(VR), F = (1, x, x^2, x^3, x^4, VR, y, y^2, y^3, y^4,
    y x, y^2 x, y x^2, y^3 x, y^3 x^2, y^2 x^3) and the coefficients of :data:`_AXIAL_COEFFICIENTS`.
    SP [m] is the equivalent single-stage size parameter, VR [-] the whole turbine's isentropic
    volume ratio. Calibrated for SP 0.02-1 m and VR 1.2-200 (as used by the secondary copies).
    Source: Astolfi and Macchi, 3rd International Seminar on ORC Power Systems (2015), paper 83;
    Macchi and Astolfi (eds.), *Organic Rankine Cycle (ORC) Power Systems*, 2017, Table 9.1
    (coefficients as transcribed in secondary copies). An attainable maximum for an optimised
    geometry, not a guarantee.
    """
    vr = float(volume_ratio)
    x, y = math.log(float(size_parameter_m)), math.log(vr)
    x2, y2 = x * x, y * y
    x3, y3 = x2 * x, y2 * y
    a0, a1, a2, a3, a4, a5, a6, a7, a8, a9, a10, a11, a12, a13, a14, a15 = _AXIAL_COEFFICIENTS[stages]
    return (a0 + a1 * x + a2 * x2 + a3 * x3 + a4 * x2 * x2 + a5 * vr + a6 * y + a7 * y2 + a8 * y3 + a9 * y2 * y2
            + a10 * y * x + a11 * y2 * x + a12 * y * x2 + a13 * y3 * x + a14 * y3 * x2 + a15 * y2 * x3)


@dataclass(frozen=True)
class AxialAstolfiMacchi:
    """Axial turbine of 1 to ``max_stages`` stages, efficiency from the Astolfi-Macchi correlation.

    Equivalent single-stage size parameter of an n-stage machine: each stage takes the n-th part
    of the isentropic enthalpy drop, so SP_eq = sqrt(V_out_s) / (dh_s / n)^(1/4) = n^(1/4) SP (the
    correlation is "in function of the equivalent single stage SP and the total isentropic VR",
    Astolfi and Macchi 2015, abstract; the per-stage drop is our reading, from memory of the
    book's chapter: ../shared/REFERENCES.md marks it [M]). The volume ratio is the whole
    turbine's; the volume ratio per stage is VR^(1/n).

    Stage count, a stated rule: the fewest stages (1 to ``max_stages``) whose volume ratio per
    stage VR^(1/n) is at most ``max_vr_per_stage`` (default 10: from memory, supersonic single
    axial stages of ORC turbines are built for volume ratios up to about 10; a study setting).
    The correlation always favours more stages, but every stage costs money: one more is taken
    only when the expansion needs it (common practice; once costs exist, the stage count becomes
    part of the cost optimum). No count within the limit: no turbine fits (a hard limit, the case
    is infeasible). ``min_stages`` raises the count: the cycle's fixed point asks for n + 1 stages
    where the count would flip between n and n + 1 with the efficiency each gives.

    Validity (data, :attr:`VALIDITY`): outside it the inputs are clamped to the range and the
    design carries a warning naming the range (a soft limit).
    """

    max_stages: int = 3
    max_vr_per_stage: float = 10.0
    name: str = "axial-sp-vr"
    size_dependent: ClassVar[bool] = True
    #: study keys (dotted paths) only this model reads (see ConstantEfficiency.own_keys)
    own_keys: ClassVar[tuple[str, ...]] = ("machines.max_turbine_stages", "limits.max_volume_ratio_per_stage")
    #: range of the correlation's inputs (as used by the secondary copies of the table)
    VALIDITY: ClassVar[dict[str, tuple[float, float]]] = {"size_parameter_m": (0.02, 1.0), "volume_ratio": (1.2, 200.0)}
    #: first guess of the efficiency in the fixed point of a cycle evaluation [-]
    nominal_efficiency: ClassVar[float] = 0.85

    def __post_init__(self):
        if self.max_stages not in _AXIAL_COEFFICIENTS:
            raise ValueError(f"the axial correlation has 1 to {max(_AXIAL_COEFFICIENTS)} stages, not {self.max_stages}")

    def efficiency(self, size_parameter_m: float, volume_ratio: float) -> float:
        return self.design(size_parameter_m, volume_ratio).efficiency

    def design(self, size_parameter_m: float, volume_ratio: float, min_stages: int = 1) -> TurbineDesign:
        """The turbine of the fewest stages, at least min_stages (see the class docstring)."""
        SP, VR = float(size_parameter_m), float(volume_ratio)
        if not (SP > 0.0 and VR > 0.0):
            return TurbineDesign(math.nan, reason="no expansion: the turbine has no size parameter or volume ratio")
        (sp_lo, sp_hi), (vr_lo, vr_hi) = self.VALIDITY["size_parameter_m"], self.VALIDITY["volume_ratio"]
        warnings = []
        vr_used = min(max(VR, vr_lo), vr_hi)
        if vr_used != VR:
            warnings.append(f"turbine volume ratio {VR:.3g} is outside the axial correlation's range {vr_lo:g}-{vr_hi:g}: "
                            f"efficiency taken at {vr_used:g}")
        n = None
        for k in range(max(1, min_stages), self.max_stages + 1):
            if VR ** (1.0 / k) <= self.max_vr_per_stage:
                n = k
                break
        if n is None:
            return TurbineDesign(math.nan, warnings=tuple(warnings), reason=(
                f"turbine volume ratio {VR:.4g} needs more than {self.max_stages} stage{'s' if self.max_stages > 1 else ''} "
                f"(at most {self.max_vr_per_stage:g} per stage)"))
        vr_stage = VR ** (1.0 / n)
        sp_eq = SP * n ** 0.25
        sp_used = min(max(sp_eq, sp_lo), sp_hi)
        eta = axial_efficiency_astolfi_macchi(n, sp_used, vr_used)
        if sp_used != sp_eq:
            warnings.append(f"turbine size parameter {sp_eq:.3g} m ({n} stage{'s' if n > 1 else ''}) is outside the "
                            f"axial correlation's range {sp_lo:g}-{sp_hi:g} m: efficiency taken at {sp_used:g} m")
        if not eta > 0.2:
            return TurbineDesign(eta, n, vr_stage, tuple(warnings),
                                 reason=f"the axial correlation gives no useful turbine (efficiency {eta:.2f})")
        return TurbineDesign(eta, n, vr_stage, tuple(warnings))

    @classmethod
    def from_settings(cls, machines, limits) -> AxialAstolfiMacchi:
        """The model of a study's machines.max_turbine_stages and limits.max_volume_ratio_per_stage."""
        return cls(max_stages=machines.max_turbine_stages, max_vr_per_stage=limits.max_volume_ratio_per_stage)


#: Registry of turbine efficiency models by name (one place: the study's machines.turbine_model
#: allows these names, and the engine builds the model with the class's from_settings).
TURBINE_MODELS = {"constant": ConstantEfficiency, "axial-sp-vr": AxialAstolfiMacchi}
#: The model a study uses when it names none.
DEFAULT_TURBINE_MODEL = "axial-sp-vr"
