"""The fluid catalogue: data file, loading, look-up, filtering and the vapour-curve type.

Typed-in data (family, ASHRAE 34 safety class, GWP100, ODP, thermal-stability limit, each with
its source) come from the repository's ``fluids/catalogue.csv``, which the wheel carries as
``orcscreen/catalogue/catalogue.csv`` (override with the environment variable
``ORCSCREEN_CATALOGUE``; see :func:`catalogue_path`). Everything else is computed from the
equation of state through :mod:`orcscreen.properties` (critical temperature and pressure,
normal boiling point, molar mass and the vapour-curve type) once per CoolProp build and kept in
an on-disk cache (:mod:`orcscreen.constants_cache`).

Vapour-curve criterion (dry / wet / isentropic)
    sigma = (T_c / R) * (ds/dT) of the saturated vapour at T_r = T/T_c = 0.7 [-],
    R = R_u / M the specific gas constant. This is the dimensionless slope that Invernizzi,
    Iora and Silva (Appl. Therm. Eng. 27 (2007) 100-110) call the molecular complexity (from
    memory); the sign convention is that of Liu, Chien and Wang (Energy 29 (2004) 1207-1217,
    xi = ds/dT > 0 dry, < 0 wet; from memory), and it is the slope ds*/dT_r with s* = s/R used
    by White and Velasco (Energy 154 (2018) 269-276, abstract read). sigma > +1 is "dry",
    sigma < -1 is "wet", |sigma| <= 1 is "isentropic". The band of +-1 is orcscreen's own
    choice: for fluids inside it an isentropic expansion from saturated vapour at T_r = 0.7
    to T_r = 0.6 ends within about 2.5 % of the saturated-vapour state (e.g. R11, sigma =
    -0.57: quality 0.98). If 0.7 T_c lies below the lowest temperature of the equation of
    state (carbon dioxide: triple point), the slope is taken 1 K above that temperature.

Filters (:func:`selection`, :func:`select`): max_gwp, safety_classes and zero_odp leave out a
fluid whose value is unknown (conservative), and :func:`selection` returns every fluid left out
with its reason, for the check, the run summary, run-info.json and the report.
Displays write a missing catalogue value as :data:`UNKNOWN` and the class "none" as
:data:`NOT_CLASSIFIED` (:func:`safety_class_text`, :func:`gwp_text`).

Regulatory flags: the ozone-depleting families (:data:`MONTREAL_FAMILIES`, CFCs and HCFCs, which
the Montreal Protocol phases out) are left out of "all" and reported as left out; named
explicitly (by fluid or family) they are screened with :data:`OZONE_DEPLETING_WARNING`
(:func:`regulatory_warnings`). :func:`caution_text` is the one short caution of a case
(flammable, toxic, high GWP, ozone-depleting, vacuum condenser) that the console, ranking.csv
and ranking.xlsx show.
"""

from __future__ import annotations

import csv
import difflib
import functools
import math
import os
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING

from orcscreen.constants_cache import ConstantsCache
from orcscreen.properties import PropertyError, coolprop_build, coolprop_fluid_names, get_fluid

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "CAUTIONS",
    "CATALOGUE_ENV",
    "CURVE_REDUCED_TEMPERATURE",
    "FAMILIES",
    "GWP_REPORTS",
    "GWP_HIGH",
    "GWP_VERY_HIGH",
    "ISENTROPIC_BAND",
    "MONTREAL_FAMILIES",
    "OZONE_DEPLETING_WARNING",
    "NOT_CLASSIFIED",
    "FROM_COMPONENTS",
    "SAFETY_CLASSES",
    "UNKNOWN",
    "CatalogueError",
    "FluidInfo",
    "LeftOut",
    "Selection",
    "UnknownFluidError",
    "CATALOGUE_COLUMNS",
    "catalogue_frame",
    "catalogue_rows",
    "catalogue_path",
    "caution_text",
    "classify_curve",
    "close_matches",
    "get_info",
    "gwp_text",
    "left_out_of",
    "load_catalogue",
    "ozone_depleting_warning",
    "regulatory_warnings",
    "safety_class_text",
    "select",
    "selection",
    "vapour_curve_slope",
]

CATALOGUE_ENV = "ORCSCREEN_CATALOGUE"


def _shipped_catalogue() -> Path:
    """The catalogue that comes with orcscreen. An install from the wheel holds it as package
    data, ``orcscreen/catalogue/catalogue.csv`` (pyproject.toml maps the repository's ``fluids/``
    folder to ``orcscreen.catalogue``); a source tree or an editable install reads the
    repository's ``fluids/catalogue.csv`` beside the package."""
    packaged = resources.files("orcscreen") / "catalogue" / "catalogue.csv"
    if isinstance(packaged, Path) and packaged.is_file():
        return packaged
    return Path(__file__).resolve().parent.parent / "fluids" / "catalogue.csv"


DEFAULT_CATALOGUE = _shipped_catalogue()

FAMILIES = (
    "hfc", "hfo", "hcfo", "hydrocarbon", "siloxane", "aromatic", "perfluorocarbon",
    "ether", "ketone", "alcohol", "natural", "cfc", "hcfc", "other",
)
#: ASHRAE 34 / ISO 817 safety groups: toxicity A (lower) / B (higher), flammability 1, 2L, 2, 3.
SAFETY_CLASSES = ("A1", "A2L", "A2", "A3", "B1", "B2L", "B2", "B3")
_FLAMMABLE_SUBCLASSES = ("2L", "2", "3")
#: Where a GWP100 comes from: an IPCC assessment report (AR6 2021, AR5 2013, AR4 2007, TAR 2001,
#: SAR 1995), "other" (another document: manufacturer, fact sheet, common practice) or "none"
#: (no value: gwp100 left empty).
GWP_REPORTS = ("AR6", "AR5", "AR4", "TAR", "SAR", "other", "none")
#: The one word every display of the catalogue uses for a value that is not known.
UNKNOWN = "unknown"
NOT_CLASSIFIED = "not classified"  # display of safety_class "none": ASHRAE 34 lists no class
#: A mixture's class that ASHRAE 34 does not give: the more hazardous of its components' (orcscreen.mixtures)
FROM_COMPONENTS = "not classified by ASHRAE 34 as a blend, taken from its components"
_FLAMMABILITY_WORDS = {
    "1": "no flame propagation",
    "2L": "lower flammability, low burning velocity",
    "2": "flammable",
    "3": "higher flammability",
}

CURVE_REDUCED_TEMPERATURE = 0.7  # T/T_c at which sigma is evaluated (Invernizzi et al. 2007)
ISENTROPIC_BAND = 1.0  # |sigma| <= band -> "isentropic" (orcscreen's choice, see docstring)
R_UNIVERSAL_J_molK = 8.314462618  # molar gas constant, CODATA 2018 (exact in the 2019 SI)
P_NORMAL_Pa = 101325.0  # pressure of the normal boiling point
GWP_FGAS_NOTICE = 150.0  # GWP100 from which F-gas restrictions commonly start (common practice)
#: "high GWP" in a case's caution: GWP100 >= 150, the lowest of the thresholds at which
#: Regulation (EU) 2024/573 (F-gas Regulation, Annex IV) prohibits placing new equipment of
#: several kinds on the market (thresholds 150, 750 and 2500 by kind; from memory, not read).
GWP_HIGH = GWP_FGAS_NOTICE
#: "very high GWP": GWP100 >= 2500, the threshold of the EU F-gas bans on the most potent
#: fluids (Regulation (EU) 517/2014 and 2024/573; from memory, not read).
GWP_VERY_HIGH = 2500.0
#: Families the Montreal Protocol phases out as ozone-depleting substances: CFCs (Annex A) and
#: HCFCs (Annex C) (common knowledge of the trade). Left out of "all" (see :func:`selection`).
MONTREAL_FAMILIES = ("cfc", "hcfc")
_OZONE_DEPLETING = "ozone-depleting: phased out under the Montreal Protocol"  # a caution's words
OZONE_DEPLETING_WARNING = ("ozone-depleting: phased out under the Montreal Protocol, "
                           "screened for comparison only (not for a new plant)")
#: Families whose members are flammable by their safety data sheets (alkanes, alkenes and
#: cycloalkanes, aromatics, alcohols, ethers, methylsiloxanes: flammable gases or liquids;
#: common practice, from memory). Used only for a fluid without an ASHRAE 34 class; other
#: unclassified fluids (e.g. a fluoroketone, a fluorinated blend) are treated as flammable.
FLAMMABLE_FAMILIES = ("hydrocarbon", "aromatic", "alcohol", "ether", "siloxane")
P_ATM_BAR = 1.01325  # a condenser below it runs under vacuum

_COLUMNS = (
    "coolprop_name", "display_name", "family", "safety_class", "safety_class_source",
    "gwp100", "gwp_source", "gwp_report", "odp", "odp_source", "max_temperature_C", "max_temperature_source",
)
_SOURCE_COLUMNS = ("safety_class_source", "gwp_source", "odp_source", "max_temperature_source")

CAUTIONS = """\
Working fluids can burn, poison and suffocate. Classes 2L, 2 and 3 of ASHRAE 34 / ISO 817 are
flammable (3 most of all); class B fluids are of higher toxicity; fluids without a class are
treated here as flammable and toxic until their safety data sheet says otherwise.
Any leaked vapour displaces air: in plant rooms, pits and other enclosed or low spaces even a
non-toxic, non-flammable fluid can asphyxiate. Detect, ventilate, and never enter unchecked.
High-GWP fluids (fluorinated gases) face charge, leak-check, phase-down and ban rules (e.g. the
EU F-gas regulation); ozone-depleting fluids are controlled by the Montreal Protocol.
An ORC is pressure equipment: design, materials, relief and inspection follow pressure
equipment law, not this screening.
These results are a preliminary screening, not a design. Local codes (pressure equipment,
refrigerant safety, F-gas and environmental rules) and licensed engineers have the last word.
"""


class UnknownFluidError(ValueError):
    """A fluid, display or family name that the catalogue does not know; lists close matches."""


class CatalogueError(ValueError):
    """The catalogue file is malformed; the message names the file, line, column and value."""


@dataclass(frozen=True)
class FluidInfo:
    """One catalogue fluid: typed-in data with sources, and values computed from the EOS.

    Units: T_crit_K, T_nbp_K [K]; p_crit_Pa [Pa]; M_kg_mol [kg/mol]; gwp100 [-] (100-year,
    mass basis); odp [-] (CFC-11 = 1); max_temperature_C [°C] (highest allowed turbine-inlet
    temperature, thermal-stability limit). None where unknown; T_nbp_K is None when the fluid
    has no liquid at 101325 Pa. curve_slope is sigma, see the module docstring.
    safety_class is an ASHRAE 34 group, "none" (not classified) or "" (unknown).
    gwp_report is the assessment report of gwp100, one of :data:`GWP_REPORTS`.
    A binary mixture (:mod:`orcscreen.mixtures`, family "mixture") has its two components'
    entries in ``components``; ``class_from_components`` is True when its safety_class is not
    an ASHRAE 34 blend class but taken from its components (the more hazardous of each).
    """

    coolprop_name: str
    display_name: str
    family: str
    safety_class: str
    safety_class_source: str
    gwp100: float | None
    gwp_source: str
    gwp_report: str
    odp: float | None
    odp_source: str
    max_temperature_C: float | None
    max_temperature_source: str
    T_crit_K: float
    p_crit_Pa: float
    T_nbp_K: float | None
    M_kg_mol: float
    curve_type: str
    curve_slope: float
    class_from_components: bool = False
    components: tuple["FluidInfo", ...] = ()

    @property
    def classified(self) -> bool:
        """True when the fluid has an ASHRAE 34 safety group in the catalogue."""
        return self.safety_class in SAFETY_CLASSES

    @property
    def flammable(self) -> bool:
        """Flammability subclass 2L, 2 or 3; also True for unclassified fluids (conservative)."""
        if not self.classified:
            return True
        return self.safety_class[1:] in _FLAMMABLE_SUBCLASSES

    @property
    def ozone_depleting(self) -> bool:
        """True for the families the Montreal Protocol phases out (:data:`MONTREAL_FAMILIES`),
        and for a mixture with such a component."""
        return self.family in MONTREAL_FAMILIES or any(c.ozone_depleting for c in self.components)

    @property
    def toxicity(self) -> str:
        """"lower" (class A), "higher" (class B) or "unclassified"."""
        if not self.classified:
            return "unclassified"
        return "lower" if self.safety_class[0] == "A" else "higher"

    @property
    def class_words(self) -> str:
        """The safety class in words: "ASHRAE 34 class A1", "not classified in ASHRAE 34",
        "ASHRAE 34 class unknown" or, for a mixture, "not classified by ASHRAE 34 as a blend,
        taken from its components: A3"."""
        if self.class_from_components:
            return f"{FROM_COMPONENTS}: {self.safety_class}"
        if self.safety_class == "none":
            return f"{NOT_CLASSIFIED} in ASHRAE 34"
        return f"ASHRAE 34 class {safety_class_text(self.safety_class)}"

    @property
    def cautions(self) -> str:
        """Short fluid-specific cautions (safety class, GWP, ODP, stability, condenser)."""
        parts = []
        if self.classified:
            sub = self.safety_class[1:]
            words = f"{self.toxicity} toxicity, {_FLAMMABILITY_WORDS[sub]}"
            if self.class_from_components:  # a mixture without an ASHRAE 34 blend class
                parts.append(f"{FROM_COMPONENTS[0].upper()}{FROM_COMPONENTS[1:]}: {self.safety_class} ({words}).")
            else:
                parts.append(f"ASHRAE 34 class {self.safety_class}: {words}.")
        else:
            words = self.class_words
            parts.append(f"{words[0].upper()}{words[1:]}: treat as flammable and toxic.")
        if self.gwp100 is None:
            parts.append(f"GWP {UNKNOWN}.")
        elif self.gwp100 >= GWP_FGAS_NOTICE:
            parts.append(f"GWP100 {self.gwp100:g}: F-gas rules apply.")
        if self.odp is None:
            parts.append("ODP unknown.")
        elif self.odp > 0.0:
            parts.append(f"Ozone-depleting (ODP {self.odp:g}): Montreal Protocol controls.")
        if self.max_temperature_C is None:
            parts.append("Thermal-stability limit unknown.")
        else:
            parts.append(f"Stable to about {self.max_temperature_C:g} °C.")
        if self.T_nbp_K is not None and self.T_nbp_K > 303.15:
            parts.append("Boils above 30 °C at 1 atm: sub-atmospheric condenser likely.")
        return " ".join(parts)


# -- computed columns ----------------------------------------------------------------------
def classify_curve(sigma: float, band: float = ISENTROPIC_BAND) -> str:
    """"dry" if sigma > band, "wet" if sigma < -band, else "isentropic" (sigma [-])."""
    if sigma > band:
        return "dry"
    if sigma < -band:
        return "wet"
    return "isentropic"


def vapour_curve_slope(coolprop_name: str) -> float:
    """sigma = (T_c/R) ds/dT of the saturated vapour at T_r = 0.7 [-] (module docstring)."""
    fluid = get_fluid(coolprop_name)
    T_K = max(CURVE_REDUCED_TEMPERATURE * fluid.T_crit_K, fluid.T_min_K + 1.0)
    R_J_kgK = R_UNIVERSAL_J_molK / fluid.M_kg_mol
    dTds = fluid.saturated_vapour_dTds(T_K)
    return fluid.T_crit_K / (R_J_kgK * dTds)


def _normal_boiling_point_K(fluid) -> float | None:
    """Saturation temperature [K] at 101325 Pa, None if that pressure has no liquid-vapour line."""
    if fluid.p_crit_Pa <= P_NORMAL_Pa:
        return None
    try:
        p_lowest_Pa = fluid.sat_T(fluid.T_min_K).p_Pa
    except PropertyError:
        p_lowest_Pa = None
    if p_lowest_Pa is not None and p_lowest_Pa > P_NORMAL_Pa:
        return None  # 1 atm is below the triple-point pressure (e.g. carbon dioxide)
    return fluid.T_sat_K(P_NORMAL_Pa)


@functools.lru_cache(maxsize=1)
def _constants_cache() -> ConstantsCache:
    return ConstantsCache("fluid-constants", coolprop_build())


@functools.lru_cache(maxsize=None)
def _computed(coolprop_name: str) -> dict:
    """The equation-of-state columns of one fluid, from the on-disk cache if it has them
    (:mod:`orcscreen.constants_cache`), else computed (and kept there)."""
    return _constants_cache().get(coolprop_name, lambda: _compute(coolprop_name))


def _compute(coolprop_name: str) -> dict:
    fluid = get_fluid(coolprop_name)
    sigma = vapour_curve_slope(coolprop_name)
    return {
        "T_crit_K": fluid.T_crit_K,
        "p_crit_Pa": fluid.p_crit_Pa,
        "T_nbp_K": _normal_boiling_point_K(fluid),
        "M_kg_mol": fluid.M_kg_mol,
        "curve_type": classify_curve(sigma),
        "curve_slope": sigma,
    }


# -- the data file -------------------------------------------------------------------------
def catalogue_path() -> Path:
    """The catalogue file in use: $ORCSCREEN_CATALOGUE if set, else the shipped one
    (:data:`DEFAULT_CATALOGUE`: the wheel's package data or the repository's fluids/catalogue.csv)."""
    override = os.environ.get(CATALOGUE_ENV)
    return Path(override).expanduser().resolve() if override else DEFAULT_CATALOGUE


def _number(text: str, where: str, column: str, minimum: float) -> float | None:
    if text == "":
        return None
    try:
        value = float(text)
    except ValueError:
        raise CatalogueError(f"{where}: column {column!r} = {text!r} is not a number (leave it empty if unknown)") from None
    if not math.isfinite(value) or value < minimum:
        raise CatalogueError(f"{where}: column {column!r} = {text!r} must be a finite number >= {minimum:g}")
    return value


def _parse_row(row: dict, where: str, known: frozenset[str]) -> FluidInfo:
    name = row["coolprop_name"]
    if name not in known:
        hint = difflib.get_close_matches(name, sorted(known), n=3)
        raise CatalogueError(
            f"{where}: coolprop_name {name!r} is not a CoolProp HEOS fluid"
            + (f"; did you mean {', '.join(hint)}?" if hint else "")
        )
    if not row["display_name"]:
        raise CatalogueError(f"{where}: column 'display_name' is empty")
    family = row["family"].lower()
    if family not in FAMILIES:
        raise CatalogueError(f"{where}: family {row['family']!r} is not one of {', '.join(FAMILIES)}")
    safety = row["safety_class"].upper() if row["safety_class"].lower() != "none" else "none"
    if safety not in SAFETY_CLASSES + ("none", ""):
        raise CatalogueError(
            f"{where}: safety_class {row['safety_class']!r} is not one of "
            f"{', '.join(SAFETY_CLASSES)}, 'none' (not classified) or empty (unknown)"
        )
    for column in _SOURCE_COLUMNS:
        if not row[column]:
            raise CatalogueError(f"{where}: column {column!r} is empty (write 'unknown' if there is no source)")
    gwp100 = _number(row["gwp100"], where, "gwp100", 0.0)
    gwp_report = _gwp_report(row["gwp_report"], gwp100, where)
    try:
        computed = _computed(name)
    except (PropertyError, ValueError, ZeroDivisionError) as exc:
        raise CatalogueError(f"{where}: equation-of-state values for {name!r} failed: {exc}") from None
    return FluidInfo(
        coolprop_name=name,
        display_name=row["display_name"],
        family=family,
        safety_class=safety,
        safety_class_source=row["safety_class_source"],
        gwp100=gwp100,
        gwp_source=row["gwp_source"],
        gwp_report=gwp_report,
        odp=_number(row["odp"], where, "odp", 0.0),
        odp_source=row["odp_source"],
        max_temperature_C=_number(row["max_temperature_C"], where, "max_temperature_C", -273.15),
        max_temperature_source=row["max_temperature_source"],
        **computed,
    )


def _gwp_report(text: str, gwp100: float | None, where: str) -> str:
    """The gwp_report cell checked: one of GWP_REPORTS (any case), "none" exactly when gwp100 is empty."""
    spellings = {r.lower(): r for r in GWP_REPORTS}
    report = spellings.get(text.lower())
    if report is None:
        raise CatalogueError(f"{where}: gwp_report {text!r} is not one of {', '.join(GWP_REPORTS)}")
    if (report == "none") != (gwp100 is None):
        allowed = "'none' (gwp100 is empty)" if gwp100 is None else \
            f"the report the value comes from ({', '.join(GWP_REPORTS[:-1])}; gwp100 is {gwp100:g})"
        raise CatalogueError(f"{where}: gwp_report {text!r} does not fit gwp100; allowed: {allowed}")
    return report


@functools.lru_cache(maxsize=8)
def _load(path_text: str, stamp: tuple[int, int]) -> tuple[FluidInfo, ...]:
    path = Path(path_text)
    try:
        with path.open(newline="", encoding="utf-8") as fh:
            lines = [(n, line) for n, line in enumerate(fh, start=1) if line.strip() and not line.lstrip().startswith("#")]
    except OSError as exc:
        raise CatalogueError(f"{path}: cannot read the fluid catalogue: {exc.strerror}") from None
    if not lines:
        raise CatalogueError(f"{path}: the fluid catalogue is empty")
    reader = csv.reader([line for _, line in lines])
    header = [h.strip() for h in next(reader)]
    missing = [c for c in _COLUMNS if c not in header]
    if missing:
        raise CatalogueError(f"{path}: header lacks column(s) {', '.join(missing)}; expected {', '.join(_COLUMNS)}")
    known = frozenset(coolprop_fluid_names())
    infos: list[FluidInfo] = []
    seen: dict[str, str] = {}
    reserved = set(FAMILIES) | {"all"}
    for (line_no, _), cells in zip(lines[1:], reader):
        where = f"{path}, line {line_no}"
        if len(cells) != len(header):
            raise CatalogueError(f"{where}: {len(cells)} fields, the header has {len(header)}")
        row = {h: c.strip() for h, c in zip(header, cells)}
        info = _parse_row(row, where, known)
        for key in {info.coolprop_name.lower(), info.display_name.lower()}:
            if key in reserved:
                raise CatalogueError(f"{where}: name {key!r} is reserved for a family or 'all'")
            if key in seen:
                raise CatalogueError(f"{where}: name {key!r} is already used by {seen[key]}")
            seen[key] = info.coolprop_name
        infos.append(info)
    _constants_cache().save()
    return tuple(infos)


def load_catalogue() -> tuple[FluidInfo, ...]:
    """All catalogue fluids in file order (cached per file version; EOS values per process)."""
    path = catalogue_path()
    try:
        st = path.stat()
        stamp = (st.st_mtime_ns, st.st_size)
    except OSError:
        stamp = (0, 0)  # _load reports the missing file
    return _load(str(path), stamp)


# -- look-up and filtering -----------------------------------------------------------------
def _index() -> dict[str, FluidInfo]:
    index: dict[str, FluidInfo] = {}
    for info in load_catalogue():
        index[info.coolprop_name.lower()] = info
        index[info.display_name.lower()] = info
    return index


def close_matches(name: str, include_families: bool = False) -> list[str]:
    """Catalogue names (CoolProp or display) close to name; optionally family names and "all"."""
    spellings: dict[str, str] = {}
    for info in load_catalogue():
        spellings.setdefault(info.coolprop_name.lower(), info.coolprop_name)
        spellings.setdefault(info.display_name.lower(), info.display_name)
    if include_families:
        for word in FAMILIES + ("all",):
            spellings.setdefault(word, word)
    hits = difflib.get_close_matches(name.strip().lower(), list(spellings), n=5, cutoff=0.6)
    return [spellings[h] for h in hits]


def _unknown(name: str, include_families: bool) -> UnknownFluidError:
    what = "fluid or family" if include_families else "fluid"
    hints = close_matches(name, include_families)
    hint = f"; close matches: {', '.join(hints)}" if hints else "; see `orcscreen fluids` for the list"
    return UnknownFluidError(f"unknown {what} {name!r}{hint}")


def get_info(name: str) -> FluidInfo:
    """The catalogue entry for a CoolProp or display name (case-insensitive); for a binary
    mixture name (``A[x]&B[1-x]`` or ``A&B``) the mixture's entry, :func:`orcscreen.mixtures.mixture_info`."""
    from orcscreen import mixtures

    if mixtures.is_mixture(name):
        return mixtures.mixture_info(str(name))
    info = _index().get(str(name).strip().lower())
    if info is None:
        raise _unknown(str(name), include_families=False)
    return info


def _resolve(item: str) -> set[str]:
    """Catalogue names an include/exclude item stands for ("all": every fluid, the
    ozone-depleting ones too; :func:`selection` takes those out of "all" itself)."""
    key = str(item).strip().lower()
    infos = load_catalogue()
    if key == "all":
        return {i.coolprop_name for i in infos}
    if key in FAMILIES:
        return {i.coolprop_name for i in infos if i.family == key}
    info = _index().get(key)
    if info is None:
        raise _unknown(str(item), include_families=True)
    return {info.coolprop_name}


def _as_list(items) -> list[str]:
    return [items] if isinstance(items, str) else list(items)


@dataclass(frozen=True)
class LeftOut:
    """A fluid that the include/exclude lists asked for and a filter left out, with the reason
    (e.g. "GWP 1530 above max_gwp 150"; several filters: reasons joined by "; ")."""

    info: FluidInfo
    reason: str

    @property
    def line(self) -> str:
        """One display line: "display name: reason"."""
        return f"{self.info.display_name}: {self.reason}"

    def as_dict(self) -> dict:
        """For JSON (run-info.json): fluid (CoolProp name), display_name, reason."""
        return {"fluid": self.info.coolprop_name, "display_name": self.info.display_name, "reason": self.reason}


@dataclass(frozen=True)
class Selection:
    """What :func:`selection` chose (catalogue order) and what its filters left out (same order)."""

    chosen: tuple[FluidInfo, ...]
    left_out: tuple[LeftOut, ...]


def _gwp_reason(info: FluidInfo, max_gwp: float) -> str | None:
    """Why max_gwp leaves the fluid out, None if it keeps it. An unknown GWP is left out
    (conservative), and the reason says so with the catalogue's own words on why it is unknown
    (the first clause of gwp_source after "unknown", e.g. "not assessed by IPCC AR6")."""
    if info.gwp100 is None:
        why = info.gwp_source.removeprefix(UNKNOWN).strip(" :;,").split(";")[0].strip()
        return f"GWP not known{f' ({why})' if why else ''}: left out by max_gwp"
    if info.gwp100 > max_gwp:
        return f"GWP {info.gwp100:g} above max_gwp {max_gwp:g}"
    return None


def _class_reason(info: FluidInfo, allowed: set[str]) -> str | None:
    if info.safety_class in allowed:
        return None
    if not info.classified:
        return f"{info.class_words}: left out by safety_classes"
    how = f" ({FROM_COMPONENTS})" if info.class_from_components else ""
    return f"safety class {info.safety_class}{how} not in safety_classes {', '.join(sorted(allowed))}"


def _all_reason(info: FluidInfo) -> str:
    """Why "all" leaves an ozone-depleting fluid out, and how to screen it anyway."""
    return (f"{_OZONE_DEPLETING} ({info.family.upper()}): left out of \"all\"; "
            f"name it or its family ({info.family}) in fluids.include to screen it")


def _odp_reason(info: FluidInfo) -> str | None:
    if info.odp is None:
        return f"ODP {UNKNOWN}: left out by zero_odp"
    return None if info.odp == 0.0 else f"ODP {info.odp:g} not zero: left out by zero_odp"


def _filter_reasons(info: FluidInfo, max_gwp, allowed: set[str] | None, zero_odp: bool) -> list[str]:
    """Why the filters max_gwp, safety_classes (allowed) and zero_odp leave a fluid out (empty: kept)."""
    reasons = [
        max_gwp is not None and _gwp_reason(info, max_gwp),
        allowed is not None and _class_reason(info, allowed),
        zero_odp and _odp_reason(info),
    ]
    return [r for r in reasons if r]


def selection(include=("all",), exclude=(), max_gwp=None, safety_classes=None, zero_odp=False,
              mixtures=()) -> Selection:
    """Catalogue fluids chosen by names/families and filters, with the ones the filters left out.

    include, exclude: fluid names (CoolProp or display), family names or "all". "all" leaves
    out the ozone-depleting families (:data:`MONTREAL_FAMILIES`): they are listed in
    ``left_out`` with the reason; named by fluid or family they are chosen (and
    :func:`regulatory_warnings` says what they are).
    max_gwp: keep GWP100 <= max_gwp; fluids with unknown GWP are left out (conservative).
    safety_classes: keep only these ASHRAE 34 groups; unclassified fluids are left out.
    zero_odp: keep only ODP == 0; fluids with unknown ODP are left out.
    mixtures: a study's [fluids] mixtures entries ({components, mole_fractions};
    :func:`orcscreen.mixtures.entry_names`), chosen after the pure fluids in their order and
    filtered by their own facts (:func:`orcscreen.mixtures.mixture_facts`; a composition to be
    optimised by its worse component's). exclude does not apply to them.
    A fluid named by include and not by exclude that a filter drops is in ``left_out`` with
    every filter's reason. Raises UnknownFluidError for an unknown name, ValueError for a bad
    filter value or mixture (orcscreen.mixtures.MixtureError).
    """
    chosen: set[str] = set()
    named: set[str] = set()  # chosen by a fluid or family name, not only by "all"
    for item in _as_list(include):
        names = _resolve(item)
        chosen |= names
        if str(item).strip().lower() != "all":
            named |= names
    for item in _as_list(exclude):
        chosen -= _resolve(item)
    if max_gwp is not None and (not isinstance(max_gwp, (int, float)) or not max_gwp >= 0):
        raise ValueError(f"max_gwp = {max_gwp!r}: must be a number >= 0")
    allowed = None
    if safety_classes is not None:
        allowed = {str(c).strip().upper() for c in _as_list(safety_classes)}
        bad = sorted(allowed - set(SAFETY_CLASSES))
        if bad:
            raise ValueError(f"safety class(es) {', '.join(bad)} unknown; allowed: {', '.join(SAFETY_CLASSES)}")
    kept, left = [], []
    for info in load_catalogue():
        if info.coolprop_name not in chosen:
            continue
        reasons = [info.ozone_depleting and info.coolprop_name not in named and _all_reason(info)]
        reasons = [r for r in reasons if r] + _filter_reasons(info, max_gwp, allowed, zero_odp)
        if reasons:
            left.append(LeftOut(info, "; ".join(reasons)))
        else:
            kept.append(info)
    if mixtures:
        from orcscreen import mixtures as _mixtures

        for name in _mixtures.entries_names(mixtures):
            info = _mixtures.mixture_facts(name)
            reasons = _filter_reasons(info, max_gwp, allowed, zero_odp)
            if reasons:
                left.append(LeftOut(info, "; ".join(reasons)))
            else:
                kept.append(info)
    return Selection(tuple(kept), tuple(left))


def select(include=("all",), exclude=(), max_gwp=None, safety_classes=None, zero_odp=False,
           mixtures=()) -> list[FluidInfo]:
    """The fluids :func:`selection` chooses, in catalogue order, then the mixtures (same
    arguments and errors). Mixtures come with their facts only (:func:`orcscreen.mixtures.mixture_facts`)."""
    return list(selection(include, exclude, max_gwp, safety_classes, zero_odp, mixtures).chosen)


def left_out_of(filters) -> tuple[LeftOut, ...]:
    """The fluids and mixtures that a study's [fluids] section (a mapping with the keys of
    :func:`selection`: include, exclude, max_gwp, safety_classes, zero_odp, mixtures; others
    are ignored) leaves out."""
    keys = ("include", "exclude", "max_gwp", "safety_classes", "zero_odp", "mixtures")
    return selection(**{k: filters[k] for k in keys if k in filters}).left_out


def regulatory_warnings(names) -> list[str]:
    """One line per chosen fluid (CoolProp or display names, or FluidInfo) that the Montreal
    Protocol phases out: "<display name>: ozone-depleting: phased out under the Montreal
    Protocol, ...". For `check` and the run console."""
    infos = [n if isinstance(n, FluidInfo) else _facts_of(n) for n in _as_list(names)]
    return [f"{i.display_name}: {ozone_depleting_warning(i)}" for i in infos if i.ozone_depleting]


def _facts_of(name: str) -> FluidInfo:
    """:func:`get_info` without a mixture's equation of state (its facts: orcscreen.mixtures.mixture_facts)."""
    from orcscreen import mixtures

    return mixtures.mixture_facts(str(name)) if mixtures.is_mixture(name) else get_info(name)


def ozone_depleting_warning(info: FluidInfo | None) -> str | None:
    """:data:`OZONE_DEPLETING_WARNING` for a fluid the Montreal Protocol phases out, else None
    (a case's warnings: no "; ", which separates the warnings of a row)."""
    return OZONE_DEPLETING_WARNING if info is not None and info.ozone_depleting else None


# -- cautions ------------------------------------------------------------------------------
def _flammability_words(info: FluidInfo) -> str | None:
    """Flammability in words: from the ASHRAE 34 subclass, else from the family
    (:data:`FLAMMABLE_FAMILIES`), else "treat as flammable"; None for subclass 1."""
    if info.classified:
        return {"2L": "lower flammability", "2": "flammable", "3": "highly flammable"}.get(info.safety_class[1:])
    if info.family in FLAMMABLE_FAMILIES:
        return "flammable"
    return "flammability not established: treat as flammable"


def _class_caution(info: FluidInfo) -> str:
    """Safety part of a caution: "highly flammable (ASHRAE 34 class A3)", "not classified by
    ASHRAE 34; flammable", "ASHRAE 34 class A1", for a mixture without a blend class "not
    classified by ASHRAE 34 as a blend, taken from its components: A3 (highly flammable)"..."""
    flammability = _flammability_words(info)
    if not info.classified:
        head = "not classified by ASHRAE 34" if info.safety_class == "none" else f"ASHRAE 34 class {UNKNOWN}"
        return f"{head}; {flammability}"
    words = (["higher toxicity"] if info.toxicity == "higher" else []) + ([flammability] if flammability else [])
    if info.class_from_components:  # a mixture: "not classified ... components: B3 (higher toxicity, ...)"
        return f"{info.class_words} ({', '.join(words)})" if words else info.class_words
    label = f"ASHRAE 34 class {info.safety_class}"
    return f"{', '.join(words)} ({label})" if words else label


def _condenser_caution(row, flag_below_bar: float | None) -> str | None:
    """"vacuum condenser (0.45 bar)" below 1 atm; "deep vacuum condenser" below the study's
    limits.flag_condensing_pressure_below_bar; None otherwise or without a pressure."""
    try:
        p_bar = float(row.get("condensing_pressure_bar"))
    except (AttributeError, TypeError, ValueError):
        return None
    if not math.isfinite(p_bar):
        return None
    if flag_below_bar is not None and p_bar < flag_below_bar:
        deep = "deep vacuum condenser" if p_bar < P_ATM_BAR else "condenser"
        return f"{deep} ({p_bar:.3g} bar, below the flag of {flag_below_bar:g} bar)"
    if p_bar < P_ATM_BAR:
        return f"vacuum condenser ({p_bar:.3g} bar): air ingress, large condenser"
    return None


def caution_text(info: FluidInfo | None, row=None, flag_below_bar: float | None = None) -> str:
    """The short caution of one case in plain words, parts joined by "; ": safety class and
    flammability (never blank: an unclassified fluid reads "not classified by ASHRAE 34;
    flammable" or "...; flammability not established: treat as flammable"), higher toxicity,
    ozone-depleting (:data:`MONTREAL_FAMILIES`), high GWP (>= :data:`GWP_HIGH`, very high >=
    :data:`GWP_VERY_HIGH`), and from the case's row (a mapping with condensing_pressure_bar)
    a vacuum condenser (below 1 atm, or below flag_below_bar [bar], the study's
    limits.flag_condensing_pressure_below_bar). The one function behind the console's top
    list, ranking.csv's and ranking.xlsx's ``caution`` column."""
    if info is None:
        return f"fluid not in the catalogue: safety class, flammability and GWP {UNKNOWN}; treat as flammable"
    parts = [_class_caution(info)]
    if info.ozone_depleting:
        parts.append(_OZONE_DEPLETING)
    if info.gwp100 is not None and info.gwp100 >= GWP_HIGH:
        tier, limit = ("very high GWP", GWP_VERY_HIGH) if info.gwp100 >= GWP_VERY_HIGH else ("high GWP", GWP_HIGH)
        parts.append(f"{tier} {info.gwp100:g} (EU F-gas rules restrict GWP >= {limit:g})")
    condenser = _condenser_caution(row, flag_below_bar) if row is not None else None
    if condenser:
        parts.append(condenser)
    return "; ".join(parts)


# -- display -------------------------------------------------------------------------------
def _missing(value) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value)) or value == ""


def safety_class_text(value) -> str:
    """A safety_class for display: the ASHRAE 34 group, "not classified" for "none" and
    "unknown" for an empty or missing value (ranking rows hold "" or NaN)."""
    if _missing(value):
        return UNKNOWN
    text = str(value).strip()
    return NOT_CLASSIFIED if text.lower() == "none" else text


def gwp_text(value) -> str:
    """A GWP100 for display: general format (1530, 0.501, 0.02), "unknown" when missing."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        return UNKNOWN
    return UNKNOWN if math.isnan(number) else f"{number:g}"


#: Columns of the catalogue's display table, in order (:func:`catalogue_rows`, ``orcscreen fluids``)
CATALOGUE_COLUMNS = (
    "coolprop_name", "display_name", "family", "safety_class", "gwp100", "odp", "T_crit_C",
    "p_crit_bar", "T_nbp_C", "M_g_mol", "curve_type", "max_temperature_C", "flammable", "toxicity",
)


def catalogue_rows(infos=None) -> list[dict]:
    """Display rows of catalogue fluids (°C, bar, g/mol), keys :data:`CATALOGUE_COLUMNS`, None
    where unknown; all fluids when infos is None. Plain dictionaries: no pandas."""
    infos = load_catalogue() if infos is None else infos
    return [
        {
            "coolprop_name": i.coolprop_name,
            "display_name": i.display_name,
            "family": i.family,
            "safety_class": safety_class_text(i.safety_class),
            "gwp100": i.gwp100,
            "odp": i.odp,
            "T_crit_C": i.T_crit_K - 273.15,
            "p_crit_bar": i.p_crit_Pa / 1e5,
            "T_nbp_C": None if i.T_nbp_K is None else i.T_nbp_K - 273.15,
            "M_g_mol": i.M_kg_mol * 1e3,
            "curve_type": i.curve_type,
            "max_temperature_C": i.max_temperature_C,
            "flammable": i.flammable,
            "toxicity": i.toxicity,
        }
        for i in infos
    ]


def catalogue_frame(infos=None) -> "pd.DataFrame":
    """:func:`catalogue_rows` as a DataFrame (°C, bar, g/mol); all fluids when infos is None."""
    import pandas as pd  # imported here: keeps `import orcscreen.fluids` light

    return pd.DataFrame(catalogue_rows(infos), columns=list(CATALOGUE_COLUMNS))
