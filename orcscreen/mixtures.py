"""Binary zeotropic mixtures, catalogue side: names, allowed pairs, composition and the facts
(GWP, ODP, safety class, stability limit) of a blend of two catalogue fluids.

Names (the contract with the engine): CoolProp's own mixture syntax with the first component's
mole fraction and the second's to 6 decimals, ``IsoButane[0.400000]&Isopentane[0.600000]``; the
components are the catalogue's CoolProp names. Without fractions, ``IsoButane&Isopentane`` is a
pair whose composition is to be optimised. The composition is always the FIRST component's mole
fraction x [-]; its mass fraction w [-] follows from the molar masses.

Pairs: only pairs for which CoolProp has fitted binary interaction parameters (CoolProp
documentation, "Mixtures": other pairs would need estimation schemes, to be used "with extreme
caution"). A pair CoolProp does not list (e.g. R245fa/R365mfc, measured with CoolProp 8.0.0), or
lists with the GERG-2008 defaults only (all four reducing parameters 1, no departure function:
combining rules, not a fit; e.g. water/isobutane), is refused with :class:`MixtureError`.

Facts of a blend (:func:`mixture_info`):
- GWP100 and ODP: mass-weighted sums of the components' values, the refrigerant-blend rule of
  the EU F-gas Regulation (Regulation (EU) 2024/573, Annex; from memory, not read).
- Safety class: a binary blend that ANSI/ASHRAE 34 designates (:data:`BLENDS`, from memory),
  at its nominal mass composition within +-2 % mass (:data:`BLEND_TOLERANCE`, common practice),
  takes the blend's class. Any other composition is not classified by ASHRAE 34 as a blend: it
  takes the higher toxicity (A < B) and the higher flammability (1 < 2L < 2 < 3) of its
  components (common practice), flagged by ``FluidInfo.class_from_components``; a component
  without a class leaves the blend without one ("none", treated as flammable and toxic).
- Thermal-stability limit: the lower of the components' limits (common practice: a blend is no
  more stable than its less stable component).
- Critical point, molar mass and bubble temperature at 101325 Pa come from the mixture's
  equation of state (:func:`orcscreen.properties.get_fluid`). The vapour-curve criterion of
  :mod:`orcscreen.fluids` is defined for a pure fluid's saturation line: not evaluated here.
A pair whose composition is to be optimised has the facts of its worse component (larger GWP
and ODP, class from the components) and no equation-of-state values (NaN, T_nbp_K None).

CoolProp is reached only inside functions, through :mod:`orcscreen.properties`' lazy loader.
"""

from __future__ import annotations

import dataclasses
import functools
import math
import re
from collections.abc import Iterable, Mapping

from orcscreen import fluids
from orcscreen.fluids import UNKNOWN, FluidInfo

__all__ = [
    "BLENDS",
    "BLEND_TOLERANCE",
    "MIXTURE_FAMILY",
    "OPTIMISE",
    "Blend",
    "MixtureError",
    "check_pair",
    "entry_names",
    "is_mixture",
    "mass_fraction",
    "mass_fraction_first",
    "mass_weighted",
    "mixture_facts",
    "mixture_info",
    "mixture_name",
    "pair_has_parameters",
    "parse_mixture",
]

MIXTURE_FAMILY = "mixture"  # FluidInfo.family of a blend (not a catalogue family)
OPTIMISE = "optimise"  # a study's mole_fractions for a composition to be optimised
SEPARATOR = "&"
DECIMALS = 6  # mole fractions in a name
BLEND_TOLERANCE = 0.02  # +-2 % mass around an ASHRAE 34 blend's nominal composition (common practice)
MAX_SUGGESTIONS = 8
P_NORMAL_Pa = 101325.0
_FLAMMABILITY_ORDER = ("1", "2L", "2", "3")
_PART = re.compile(r"^\s*([^\[\]&]+?)\s*(?:\[\s*([^\[\]]*?)\s*\])?\s*$")


class MixtureError(ValueError):
    """A mixture name or pair that cannot be used. ``problem`` and ``allowed`` are the parts of
    the message a study error line shows (``str()`` is the whole message)."""

    def __init__(self, message: str, problem: str | None = None, allowed: str | None = None):
        super().__init__(message)
        self.problem = problem or message
        self.allowed = allowed or ""


@dataclasses.dataclass(frozen=True)
class Blend:
    """A binary blend designated by ANSI/ASHRAE 34: components (catalogue names), the first
    one's nominal mass fraction [-] and the safety class."""

    designation: str
    first: str
    second: str
    w_first: float
    safety_class: str


_BLEND_SOURCE = "ANSI/ASHRAE 34-2022 (from memory, not read)"
#: Binary ASHRAE 34 blends of catalogue fluids (nominal mass composition and class from memory,
#: ANSI/ASHRAE 34-2022; not read).
BLENDS = (
    Blend("R-410A", "R32", "R125", 0.50, "A1"),
    Blend("R-507A", "R125", "R143a", 0.50, "A1"),
    Blend("R-513A", "R1234yf", "R134a", 0.56, "A1"),
    Blend("R-450A", "R134a", "R1234ze(E)", 0.42, "A1"),
    Blend("R-515A", "R1234ze(E)", "R227ea", 0.88, "A1"),
)


# -- names ---------------------------------------------------------------------------------
def is_mixture(name) -> bool:
    """True for a mixture name (it holds "&")."""
    return SEPARATOR in str(name)


def _fraction_text(x: float) -> str:
    return f"{x:.{DECIMALS}f}"


def mixture_name(first: str, second: str, x_first: float | None = None) -> str:
    """``A[x]&B[1-x]`` (6 decimals) or, without x_first, ``A&B`` (composition to be optimised).
    first, second: catalogue names (CoolProp or display; written as the catalogue's CoolProp
    names); x_first: the first component's mole fraction [-], 0 < x < 1 after rounding.
    Raises fluids.UnknownFluidError for a name the catalogue does not know, MixtureError for x."""
    a = fluids.get_info(first).coolprop_name
    b = fluids.get_info(second).coolprop_name
    if x_first is None:
        return f"{a}{SEPARATOR}{b}"
    try:
        x = round(float(x_first), DECIMALS)
    except (TypeError, ValueError):
        x = math.nan
    if not 0.0 < x < 1.0:
        raise MixtureError(f"mole fraction {x_first!r} of {a}: must lie between 0 and 1 (exclusive) at "
                           f"{DECIMALS} decimals", f"mole fraction {x_first!r}",
                           f"0 < x < 1 ({_fraction_text(10.0 ** -DECIMALS)} to {_fraction_text(1 - 10.0 ** -DECIMALS)})")
    return f"{a}[{_fraction_text(x)}]{SEPARATOR}{b}[{_fraction_text(round(1.0 - x, DECIMALS))}]"


def parse_mixture(name: str, pure_ends: bool = False) -> tuple[str, str, float | None]:
    """(first, second, x_first or None) of a mixture name, components as written; raises
    MixtureError for a name that is not two components, or whose fractions are not both given,
    not in (0, 1) (with pure_ends: [0, 1], a pure component in a mixture's clothes, which the
    tests use) or do not sum to 1 (to 1.5e-6: two numbers rounded to 6 decimals)."""
    text = str(name)
    parts = text.split(SEPARATOR)
    matches = [_PART.match(p) for p in parts]
    if len(parts) != 2 or not all(matches):
        raise MixtureError(f"{text!r} is not a binary mixture name; allowed: A&B or A[x]&B[1-x] "
                           f"(e.g. IsoButane[0.400000]&Isopentane[0.600000])")
    (a, xa), (b, xb) = (m.groups() for m in matches)
    if (xa is None) != (xb is None):
        raise MixtureError(f"{text!r}: give the mole fractions of both components or of neither")
    if xa is None:
        return a, b, None
    try:
        x1, x2 = float(xa), float(xb)
    except ValueError:
        raise MixtureError(f"{text!r}: mole fractions {xa!r}, {xb!r} are not numbers") from None
    inside = (0.0 <= x1 <= 1.0 and 0.0 <= x2 <= 1.0) if pure_ends else (0.0 < x1 < 1.0 and 0.0 < x2 < 1.0)
    if not (inside and abs(x1 + x2 - 1.0) <= 1.5e-6):
        raise MixtureError(f"{text!r}: mole fractions must lie between 0 and 1 and sum to 1")
    return a, b, x1


def _infos(name: str) -> tuple[FluidInfo, FluidInfo, float | None]:
    first, second, x = parse_mixture(name)
    return fluids.get_info(first), fluids.get_info(second), x


def mass_weighted(value_first: float, value_second: float, w_first: float) -> float:
    """w*a + (1-w)*b: a blend's value by the mass-weighted rule (GWP, ODP; EU F-gas Regulation)."""
    return w_first * value_first + (1.0 - w_first) * value_second


def mass_fraction(x: float, M_first: float, M_second: float) -> float:
    """Mass fraction [-] of the first component at its mole fraction x [-], molar masses M [kg/mol]."""
    return x * M_first / (x * M_first + (1.0 - x) * M_second)


def mass_fraction_first(name: str) -> float:
    """Mass fraction [-] of the first component: x M1 / (x M1 + (1-x) M2), molar masses M
    [kg/mol] from the equation of state (the catalogue's computed values)."""
    a, b, x = _infos(name)
    if x is None:
        raise MixtureError(f"{name!r}: no composition (to be optimised); a mass fraction needs one")
    return mass_fraction(x, a.M_kg_mol, b.M_kg_mol)


# -- pairs ---------------------------------------------------------------------------------
def _cas(coolprop_name: str) -> str:
    from orcscreen import properties

    return properties.CP.get_fluid_param_string(coolprop_name, "CAS")


def _parameter(cas_a: str, cas_b: str, key: str) -> float | None:
    from orcscreen import properties

    try:
        return float(properties.CP.get_mixture_binary_pair_data(cas_a, cas_b, key))
    except ValueError:  # CoolProp: "Could not match the binary pair / the parameter"
        return None


@functools.lru_cache(maxsize=None)
def pair_has_parameters(a: str, b: str) -> bool:
    """True when CoolProp has fitted interaction parameters for two CoolProp fluids (either
    order): the Kunz-Wagner form (betaT, gammaT, betaV, gammaV, F) not all at their defaults
    (1, 1, 1, 1, 0), or the Lemmon (2004) form of the HFC pairs (xi, zeta)."""
    cas_a, cas_b = _cas(a), _cas(b)
    for x, y in ((cas_a, cas_b), (cas_b, cas_a)):
        beta_T = _parameter(x, y, "betaT")
        if beta_T is not None:
            values = [beta_T] + [_parameter(x, y, k) for k in ("gammaT", "betaV", "gammaV")]
            return any(v is not None and v != 1.0 for v in values) or bool(_parameter(x, y, "F"))
        xi = _parameter(x, y, "xi")
        if xi is not None:
            return xi != 0.0 or bool(_parameter(x, y, "zeta"))
    return False


def _pair_text(a: FluidInfo, b: FluidInfo) -> str:
    return f"{a.display_name}/{b.display_name}"


def _suggestions(a: FluidInfo, b: FluidInfo) -> list[str]:
    """Catalogue pairs with parameters that share one component with a/b, alternating between
    the two (at most :data:`MAX_SUGGESTIONS`)."""
    found: list[list[str]] = [[], []]
    for i, (own, other) in enumerate(((a, b), (b, a))):
        for c in fluids.load_catalogue():
            if c.coolprop_name in (own.coolprop_name, other.coolprop_name):
                continue
            if pair_has_parameters(own.coolprop_name, c.coolprop_name):
                found[i].append(_pair_text(own, c))
            if len(found[i]) >= MAX_SUGGESTIONS:
                break
    merged = [p for pair in zip(found[0], found[1]) for p in pair]
    merged += found[0][len(found[1]):] + found[1][len(found[0]):]
    return merged[:MAX_SUGGESTIONS]


def check_pair(a: str, b: str) -> tuple[str, str]:
    """The catalogue CoolProp names of two fluids (CoolProp or display names) if CoolProp has
    fitted interaction parameters for the pair (:func:`pair_has_parameters`); order kept.
    Raises fluids.UnknownFluidError (with close matches) for an unknown name and MixtureError
    for a fluid paired with itself or a pair without parameters (listing the pairs with
    parameters that share a component)."""
    fa, fb = fluids.get_info(a), fluids.get_info(b)
    return _checked(fa.coolprop_name, fb.coolprop_name)


@functools.lru_cache(maxsize=None)
def _checked(a: str, b: str) -> tuple[str, str]:
    fa, fb = fluids.get_info(a), fluids.get_info(b)
    pair = _pair_text(fa, fb)
    if a == b:
        raise MixtureError(f"{pair}: a mixture needs two different fluids", "a fluid mixed with itself",
                           "two different catalogue fluids")
    if not pair_has_parameters(a, b):
        hints = _suggestions(fa, fb)
        allowed = (f"pairs with parameters, e.g. {', '.join(hints)}" if hints
                   else "pairs for which CoolProp has interaction parameters")
        problem = "CoolProp has no interaction parameters for this pair"
        raise MixtureError(f"{pair}: {problem}; {allowed.replace(', e.g.', ':', 1)}", f"{pair}: {problem}", allowed)
    return a, b


def entry_names(entry) -> list[str]:
    """Mixture names of a study's [fluids] mixtures entry (a mapping or object with components
    and mole_fractions: a list of the first's mole fractions or "optimise"), composition order."""
    get = entry.get if isinstance(entry, Mapping) else lambda k: getattr(entry, k)
    first, second = check_pair(*get("components"))
    fractions = get("mole_fractions")
    if fractions == OPTIMISE:
        return [mixture_name(first, second)]
    return [mixture_name(first, second, x) for x in fractions]


def entries_names(entries: Iterable) -> list[str]:
    """:func:`entry_names` of several entries, file order, each name once."""
    return list(dict.fromkeys(n for e in entries for n in entry_names(e)))


# -- facts ---------------------------------------------------------------------------------
def _percent(x: float) -> str:
    return f"{round(100.0 * x, 2):g}"


def _display_name(a: FluidInfo, b: FluidInfo, x: float | None) -> str:
    if x is None:
        return f"{_pair_text(a, b)} (composition optimised)"
    p = round(100.0 * x, 2)
    return f"{_pair_text(a, b)} {p:g}/{round(100.0 - p, 2):g} mol%"


def _blend_of(a: FluidInfo, b: FluidInfo, w_a: float) -> Blend | None:
    """The ASHRAE 34 blend of these components within BLEND_TOLERANCE of its nominal mass composition."""
    for blend in BLENDS:
        names = (fluids.get_info(blend.first).coolprop_name, fluids.get_info(blend.second).coolprop_name)
        if names == (a.coolprop_name, b.coolprop_name):
            w_nominal = w_a
        elif names == (b.coolprop_name, a.coolprop_name):
            w_nominal = 1.0 - w_a
        else:
            continue
        if abs(w_nominal - blend.w_first) <= BLEND_TOLERANCE + 1e-12:
            return blend
    return None


def _safety(a: FluidInfo, b: FluidInfo, w_a: float | None) -> tuple[str, str, bool]:
    """(safety_class, source, class_from_components)."""
    blend = None if w_a is None else _blend_of(a, b, w_a)
    if blend is not None:
        w1 = round(100 * blend.w_first)
        return blend.safety_class, (
            f"{blend.designation} ({blend.first}/{blend.second} {w1}/{100 - w1} % mass): {_BLEND_SOURCE}; "
            f"composition within +-{BLEND_TOLERANCE * 100:g} % mass of the nominal one (tolerance: common "
            f"practice)"), False
    classes = f"{a.display_name} {fluids.safety_class_text(a.safety_class)}, " \
              f"{b.display_name} {fluids.safety_class_text(b.safety_class)}"
    if not (a.classified and b.classified):
        return "none", (f"not classified: a component has no ASHRAE 34 class ({classes}); treated as "
                        f"flammable and toxic"), False
    toxicity = max(a.safety_class[0], b.safety_class[0])  # "A" < "B"
    flammability = max(a.safety_class[1:], b.safety_class[1:], key=_FLAMMABILITY_ORDER.index)
    return f"{toxicity}{flammability}", (
        f"not classified by ASHRAE 34 as a blend; taken from its components ({classes}): the higher "
        f"toxicity and the higher flammability (common practice)"), True


def _combined(a: FluidInfo, b: FluidInfo, w_a: float | None, what: str) -> tuple[float | None, str, str]:
    """(value, source, report) of GWP100 (what="gwp100") or ODP ("odp"): mass-weighted sum at a
    composition, the larger component value for a composition to be optimised."""
    label = "GWP100" if what == "gwp100" else "ODP"
    va, vb = getattr(a, what), getattr(b, what)
    missing = [i.display_name for i, v in ((a, va), (b, vb)) if v is None]
    rule = ("mass-weighted sum of the components' values (" + (
        "EU F-gas Regulation blend rule, from memory)" if what == "gwp100" else "common practice)"))
    if missing:
        return None, f"{UNKNOWN}: no {label} for {' and '.join(missing)} in the catalogue; a blend's {label} is " \
                     f"the {rule}", "none"
    report = a.gwp_report if a.gwp_report == b.gwp_report else "other"
    if w_a is None:
        return max(va, vb), (f"composition to be optimised: the larger of the components' {label} "
                             f"({a.display_name} {va:g}, {b.display_name} {vb:g})"), report
    value = mass_weighted(va, vb, w_a)
    return value, (f"{rule}: {w_a:.4g} x {va:g} ({a.display_name}) + {1 - w_a:.4g} x {vb:g} "
                   f"({b.display_name}), mass fractions"), report


def _stability(a: FluidInfo, b: FluidInfo) -> tuple[float | None, str]:
    rule = "a blend is no more stable than its less stable component (common practice)"
    missing = [i.display_name for i in (a, b) if i.max_temperature_C is None]
    if missing:
        return None, f"{UNKNOWN}: no limit for {' and '.join(missing)} in the catalogue; {rule}"
    return min(a.max_temperature_C, b.max_temperature_C), (
        f"the lower of the components' limits ({a.display_name} {a.max_temperature_C:g} °C, "
        f"{b.display_name} {b.max_temperature_C:g} °C): {rule}")


@functools.lru_cache(maxsize=1024)
def _facts(first: str, second: str, x: float | None) -> FluidInfo:
    a, b = fluids.get_info(first), fluids.get_info(second)
    check_pair(a.coolprop_name, b.coolprop_name)
    w_a = None if x is None else mass_fraction(x, a.M_kg_mol, b.M_kg_mol)
    safety, safety_source, from_components = _safety(a, b, w_a)
    gwp, gwp_source, gwp_report = _combined(a, b, w_a, "gwp100")
    odp, odp_source, _ = _combined(a, b, w_a, "odp")
    t_max, t_max_source = _stability(a, b)
    nan = math.nan
    return FluidInfo(
        coolprop_name=mixture_name(a.coolprop_name, b.coolprop_name, x),
        display_name=_display_name(a, b, x),
        family=MIXTURE_FAMILY,
        safety_class=safety,
        safety_class_source=safety_source,
        gwp100=gwp,
        gwp_source=gwp_source,
        gwp_report=gwp_report,
        odp=odp,
        odp_source=odp_source,
        max_temperature_C=t_max,
        max_temperature_source=t_max_source,
        T_crit_K=nan, p_crit_Pa=nan, T_nbp_K=None, M_kg_mol=nan,
        curve_type=UNKNOWN,
        curve_slope=nan,
        class_from_components=from_components,
        components=(a, b),
    )


def mixture_facts(name: str) -> FluidInfo:
    """The typed-in facts of a mixture (class, GWP, ODP, stability limit, with their sources),
    without solving its equation of state (T_crit_K, p_crit_Pa, M_kg_mol NaN; T_nbp_K None):
    what the [fluids] filters and the warnings need. Raises UnknownFluidError or MixtureError."""
    first, second, x = parse_mixture(name)
    a, b = fluids.get_info(first).coolprop_name, fluids.get_info(second).coolprop_name
    return _facts(a, b, None if x is None else round(x, DECIMALS))


@functools.lru_cache(maxsize=1024)
def _with_eos(name: str) -> FluidInfo:
    from orcscreen import properties

    info = mixture_facts(name)
    fluid = properties.get_fluid(info.coolprop_name)
    try:
        T_nbp_K = fluid.bubble_temperature_K(P_NORMAL_Pa) if fluid.p_crit_Pa > P_NORMAL_Pa else None
    except (properties.PropertyError, ValueError, ArithmeticError):
        T_nbp_K = None  # 1 atm outside the two-phase region the equation reaches
    return dataclasses.replace(info, T_crit_K=fluid.T_crit_K, p_crit_Pa=fluid.p_crit_Pa,
                               M_kg_mol=fluid.M_kg_mol, T_nbp_K=T_nbp_K)


def mixture_info(name: str) -> FluidInfo:
    """The catalogue entry of a mixture (module docstring): :func:`mixture_facts` and, for a
    name with fractions, the critical temperature [K] and pressure [Pa], the molar mass
    [kg/mol] and the bubble temperature at 101325 Pa [K] (T_nbp_K) from its equation of state."""
    facts = mixture_facts(name)
    return facts if parse_mixture(facts.coolprop_name)[2] is None else _with_eos(facts.coolprop_name)
