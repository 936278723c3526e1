"""Tests of orcscreen.fluids: the catalogue against published tables, standards and libraries.

Each check names its source. "From memory" marks values recalled rather than read for this
test; the tolerance is one unit in the last digit that the source prints.
"""

from __future__ import annotations

import textwrap

import pytest

from orcscreen import fluids as F
from orcscreen.properties import coolprop_fluid_names, get_fluid

C0 = 273.15


# -- critical point and normal boiling point -------------------------------------------------
# (catalogue name, T_crit [K], p_crit [MPa], T_nbp [K], source); None = not checked.
# Tolerances: one unit in the last digit given.
CRITICAL_AND_NBP = [
    # IAPWS R6-95(2018), the IAPWS-95 formulation: T_c, p_c exact by definition; T_nbp of
    # IAPWS-95 at 101.325 kPa (from memory).
    ("Water", "647.096", "22.064", "373.124", "IAPWS R6-95(2018) (from memory)"),
    # Span and Wagner, J. Phys. Chem. Ref. Data 25 (1996) 1509: critical point; the triple
    # point (216.592 K, 0.51795 MPa) is above 1 atm, so there is no normal boiling point.
    ("CarbonDioxide", "304.1282", "7.3773", None, "Span and Wagner 1996 (from memory)"),
    # ASHRAE Handbook Fundamentals (2017), ch. 29, table of refrigerant properties, in °C
    # and kPa, converted here exactly (from memory).
    ("R134a", "374.21", "4.0593", "247.08", "ASHRAE Fundamentals 2017 ch. 29 / NIST Webbook (from memory)"),
    ("R32", "351.26", "5.782", "221.50", "Tillner-Roth and Yokozeki, J. Phys. Chem. Ref. Data 26 (1997) (from memory)"),
    ("R152A", "386.41", "4.5168", "249.13", "Outcalt and McLinden, J. Phys. Chem. Ref. Data 25 (1996) (from memory)"),
    ("R123", "456.83", "3.6618", "300.97", "Younglove and McLinden, J. Phys. Chem. Ref. Data 23 (1994) (from memory)"),
    ("R11", "471.11", "4.4076", "296.86", "Jacobsen, Penoncello, Lemmon, Fluid Phase Equilib. 80 (1992) (from memory)"),
    ("R12", "385.12", "4.1361", "243.40", "Marx, Pruss, Wagner, VDI Fortschr.-Ber. 19/57 (1992) (from memory)"),
    ("n-Propane", "369.89", "4.2512", "231.04", "Lemmon, McLinden, Wagner, J. Chem. Eng. Data 54 (2009) (from memory)"),
    ("n-Butane", "425.125", "3.796", "272.66", "Buecker and Wagner, J. Phys. Chem. Ref. Data 35 (2006) (from memory)"),
    ("IsoButane", "407.81", "3.629", "261.40", "Buecker and Wagner, J. Phys. Chem. Ref. Data 35 (2006) (from memory)"),
    ("n-Pentane", "469.70", None, "309.21", "Span and Wagner, Int. J. Thermophys. 24 (2003) (from memory)"),
    ("Toluene", "591.75", "4.1263", "383.75", "Lemmon and Span, J. Chem. Eng. Data 51 (2006) 785 (from memory)"),
    ("MM", "518.7", "1.931", None, "Thol et al., Fluid Phase Equilib. 418 (2016) (from memory)"),
]


def _tolerance(text: str) -> float:
    """One unit in the last printed digit of a decimal string."""
    decimals = len(text.split(".")[1]) if "." in text else 0
    return 10.0 ** (-decimals)


@pytest.mark.parametrize("name, Tc, pc, Tnbp, source", CRITICAL_AND_NBP, ids=[r[0] for r in CRITICAL_AND_NBP])
def test_critical_point_and_normal_boiling_point_against_published_tables(name, Tc, pc, Tnbp, source):
    info = F.get_info(name)
    assert info.T_crit_K == pytest.approx(float(Tc), abs=_tolerance(Tc)), source
    if pc is not None:
        assert info.p_crit_Pa / 1e6 == pytest.approx(float(pc), abs=_tolerance(pc)), source
    if Tnbp is None:
        if name == "CarbonDioxide":
            assert info.T_nbp_K is None, "CO2 has no liquid at 1 atm (triple point 0.518 MPa)"
    else:
        assert info.T_nbp_K == pytest.approx(float(Tnbp), abs=_tolerance(Tnbp)), source


def test_water_against_iapws_package():
    """Water critical point and normal boiling point against the iapws package (IAPWS-95)."""
    import iapws

    info = F.get_info("water")
    assert info.T_crit_K == pytest.approx(iapws._iapws.Tc, abs=1e-3)
    assert info.p_crit_Pa == pytest.approx(iapws._iapws.Pc * 1e6, rel=1e-5)
    assert info.T_nbp_K == pytest.approx(iapws.IAPWS95(P=0.101325, x=0).T, abs=1e-3)


def test_molar_mass_of_water_and_co2_against_iupac_atomic_weights():
    """M from standard atomic weights H 1.008, C 12.011, O 15.999 g/mol (IUPAC, from memory)."""
    assert F.get_info("water").M_kg_mol * 1e3 == pytest.approx(2 * 1.008 + 15.999, abs=2e-3)
    assert F.get_info("carbon dioxide").M_kg_mol * 1e3 == pytest.approx(12.011 + 2 * 15.999, abs=2e-3)


# -- safety class ----------------------------------------------------------------------------
# ANSI/ASHRAE Standard 34-2022 safety groups (from memory). Those marked * also appear with the
# same group in the list of GB/T 7778-2017 classes read at fluorined-chemicals.com; R1224yd(Z)
# was read in the ASHRAE 34-2022 table at hvacptcharts.com.
ASHRAE_34 = {
    "R134a": "A1",  # *
    "R245fa": "B1",  # *
    "R123": "B1",  # *
    "R32": "A2L",  # *
    "R1234yf": "A2L",  # *
    "R1234ze(E)": "A2L",  # *
    "R152a": "A2",  # *
    "R142b": "A2",  # *
    "propane": "A3",
    "isobutane": "A3",  # * R-600a
    "n-butane": "A3",
    "isopentane": "A3",  # * R-601a
    "dimethyl ether": "A3",  # * R-E170
    "ammonia": "B2L",
    "carbon dioxide": "A1",
    "R1233zd(E)": "A1",  # *
    "R1336mzz(Z)": "A1",  # *
    "R227ea": "A1",  # *
    "R236fa": "A1",  # *
    "R1224yd(Z)": "A1",
    # Not listed in ASHRAE 34 ("none": not classified; from memory, as in the project's
    # reference list: R365mfc, siloxanes, toluene and cyclopentane have no class).
    "R365mfc": "none",
    "MM": "none",
    "toluene": "none",
    "cyclopentane": "none",
}


@pytest.mark.parametrize("name, expected", sorted(ASHRAE_34.items()))
def test_safety_class_against_ashrae_34(name, expected):
    assert F.get_info(name).safety_class == expected


def test_flammability_and_toxicity_follow_the_safety_class():
    """ASHRAE 34: letter A/B = lower/higher toxicity; 1 = no flame propagation, 2L/2/3 flammable."""
    assert (F.get_info("R134a").flammable, F.get_info("R134a").toxicity) == (False, "lower")
    assert (F.get_info("ammonia").flammable, F.get_info("ammonia").toxicity) == (True, "higher")
    assert (F.get_info("R245fa").flammable, F.get_info("R245fa").toxicity) == (False, "higher")
    assert F.get_info("R32").flammable and F.get_info("propane").flammable
    # No class recorded: treated as flammable, toxicity "unclassified" (orcscreen's rule).
    assert F.get_info("toluene").flammable and F.get_info("toluene").toxicity == "unclassified"
    assert "flammable" in F.get_info("MM").cautions


# -- GWP100 ----------------------------------------------------------------------------------
# Catalogue name -> species key of the globalwarmingpotentials package (IPCC names).
IPCC_SPECIES = {
    "R134a": "HFC134a", "R245fa": "HFC245fa", "R245ca": "HFC245ca", "R236FA": "HFC236fa",
    "R236EA": "HFC236ea", "R227EA": "HFC227ea", "R365MFC": "HFC365mfc", "R152A": "HFC152a",
    "R32": "HFC32", "R143a": "HFC143a", "R125": "HFC125", "R161": "HFC161",
    "n-Perfluorobutane": "C4F10", "n-Perfluoropentane": "C5F12", "n-Perfluorohexane": "C6F14",
    "RC318": "cC4F8", "R218": "C3F8", "HFE143m": "HFE143a", "R11": "CFC11", "R12": "CFC12",
    "R113": "CFC113", "R114": "CFC114", "R123": "HCFC123", "R141b": "HCFC141b",
    "R142b": "HCFC142b", "R124": "HCFC124", "R22": "HCFC22",
}


def test_gwp100_against_ipcc_ar6_via_globalwarmingpotentials():
    """IPCC AR6 WG1 (2021) Ch.7 GWP100, as transcribed by the globalwarmingpotentials package
    (column AR6GWP100): a second transcription beside the chemicals package of
    tests/test_catalogue_gwp.py."""
    import globalwarmingpotentials as gwp

    ar6 = gwp.data["AR6GWP100"]
    for name, species in IPCC_SPECIES.items():
        info = F.get_info(name)
        assert info.gwp_report == "AR6" and "AR6" in info.gwp_source, name
        assert info.gwp100 == pytest.approx(ar6[species]), name


@pytest.mark.parametrize(
    "name, ar6",
    [("R134a", 1530), ("R245fa", 962), ("R32", 771), ("R1336mzz(Z)", 2.08), ("R1233zd(E)", 3.88)],
)
def test_gwp100_against_ar6_table_7sm7(name, ar6):
    """IPCC AR6 WG1 (2021) Ch.7, Table 7.SM.7, 100-year GWP, as read in the chapter authors'
    data repository for the project's reference list (section 7, catalogue data)."""
    assert F.get_info(name).gwp100 == ar6


def test_gwp100_of_the_reference_gas_is_one():
    """IPCC AR6 WG1 Table 7.SM.7: CO2 is the reference, GWP = 1 by definition."""
    assert F.get_info("carbon dioxide").gwp100 == 1


def test_odp_of_cfc11_is_one_and_hfcs_are_zero():
    """Montreal Protocol Annex A: ODP of CFC-11 = 1 by definition; no Cl/Br -> ODP 0."""
    assert F.get_info("R11").odp == 1.0
    assert all(i.odp == 0.0 for i in F.select(include=["hfc", "hfo", "hydrocarbon"]))


# -- vapour-curve type -----------------------------------------------------------------------
# Wet / dry classification of Chen, Goswami and Stefanakos, Renew. Sustain. Energy Rev. 14
# (2010) 3059-3067, Table 1, and Liu, Chien and Wang, Energy 29 (2004) 1207-1217 (from memory:
# water, ammonia, CO2 and R32 wet; pentane, toluene, R113, R236fa, R227ea, isopentane dry).
# Siloxane MM: dry in every ORC source (common practice). R245fa: listed dry or isentropic
# depending on the author, so both are accepted.
CURVE_TYPES = {
    "water": {"wet"},
    "ammonia": {"wet"},
    "carbon dioxide": {"wet"},
    "R32": {"wet"},
    "n-pentane": {"dry"},
    "isopentane": {"dry"},
    "toluene": {"dry"},
    "R113": {"dry"},
    "R236fa": {"dry"},
    "R227ea": {"dry"},
    "MM": {"dry"},
    "R245fa": {"dry", "isentropic"},
}


@pytest.mark.parametrize("name, allowed", sorted(CURVE_TYPES.items()))
def test_vapour_curve_type_against_published_classification(name, allowed):
    assert F.get_info(name).curve_type in allowed


def test_curve_slope_sign_matches_saturated_vapour_entropy_change():
    """sigma is the slope itself: dry fluids gain saturated-vapour entropy with T, wet lose it."""
    for name in ("n-Pentane", "Water"):
        fluid = get_fluid(name)
        T = 0.7 * fluid.T_crit_K
        ds = fluid.sat_T(T + 5.0).sV - fluid.sat_T(T - 5.0).sV
        sigma = F.get_info(name).curve_slope
        assert sigma * ds > 0
        R = F.R_UNIVERSAL_J_molK / fluid.M_kg_mol
        assert sigma == pytest.approx(fluid.T_crit_K / R * ds / 10.0, rel=1e-2)


def test_classify_curve_band():
    """The isentropic band is |sigma| <= 1 (orcscreen's choice, see fluids/README.md)."""
    assert F.classify_curve(1.5) == "dry"
    assert F.classify_curve(-1.5) == "wet"
    assert F.classify_curve(0.9) == "isentropic"
    assert F.classify_curve(-1.0) == "isentropic"


# -- the catalogue as a whole ----------------------------------------------------------------
def test_catalogue_has_at_least_50_heos_fluids_with_sources():
    infos = F.load_catalogue()
    assert len(infos) >= 50
    heos = set(coolprop_fluid_names())
    for info in infos:
        assert info.coolprop_name in heos
        assert info.family in F.FAMILIES
        assert info.safety_class in F.SAFETY_CLASSES + ("none", "")
        for column in ("safety_class_source", "gwp_source", "odp_source", "max_temperature_source"):
            assert getattr(info, column).strip(), (info.coolprop_name, column)
        assert info.curve_type in ("dry", "wet", "isentropic")
        assert info.T_crit_K > 0 and info.p_crit_Pa > 0 and info.M_kg_mol > 0
        if info.T_nbp_K is not None:
            assert info.T_nbp_K < info.T_crit_K
    assert {i.family for i in infos} == set(F.FAMILIES)


def test_every_empty_value_says_unknown():
    """Brief rule: a value left empty has the source 'unknown'; a value given never does."""
    for info in F.load_catalogue():
        for value, source in (
            (info.gwp100, info.gwp_source),
            (info.odp, info.odp_source),
            (info.max_temperature_C, info.max_temperature_source),
            (info.safety_class or None, info.safety_class_source),
        ):
            if value is None:
                assert source.startswith("unknown"), (info.coolprop_name, source)
            else:
                assert not source.startswith("unknown"), (info.coolprop_name, source)


def test_get_info_accepts_coolprop_and_display_names_case_insensitive():
    assert F.get_info("R236FA") is F.get_info("r236fa")
    assert F.get_info("n-Propane") is F.get_info("PROPANE")
    assert F.get_info(" Novec 649 ").coolprop_name == "Novec649"


def test_unknown_name_lists_close_matches():
    with pytest.raises(F.UnknownFluidError) as err:
        F.get_info("R245fb")
    assert "R245fa" in str(err.value)
    assert isinstance(err.value, ValueError)
    assert "n-Pentane" in F.close_matches("pentane") or "n-pentane" in F.close_matches("pentane")


def test_select_by_family_in_catalogue_order():
    names = [i.coolprop_name for i in F.select(include=["siloxane"])]
    assert names == ["MM", "MDM", "MD2M", "MD3M", "MD4M", "D4", "D5", "D6"]
    order = [i.coolprop_name for i in F.load_catalogue()]
    mixed = [i.coolprop_name for i in F.select(include=["toluene", "hfc", "R11"])]
    assert mixed == sorted(mixed, key=order.index)


def test_select_include_exclude():
    chosen = F.select(include=["hydrocarbon", "water"], exclude=["n-pentane", "aromatic"])
    names = {i.coolprop_name for i in chosen}
    assert "Water" in names and "IsoButane" in names
    assert "n-Pentane" not in names and "Toluene" not in names
    # "all" leaves out the ozone-depleting families (Montreal Protocol); naming them adds them back
    ozone_depleting = [i for i in F.load_catalogue() if i.family in ("cfc", "hcfc")]
    assert len(F.select()) == len(F.load_catalogue()) - len(ozone_depleting)
    assert len(F.select(include=["all", "cfc", "hcfc"])) == len(F.load_catalogue())
    assert F.select(include="all", exclude="all") == []


def test_select_max_gwp_drops_high_and_unknown_gwp():
    chosen = F.select(include=["all", "hcfc"], max_gwp=150)  # R123, an HCFC, is not in "all" alone
    assert chosen and all(i.gwp100 is not None and i.gwp100 <= 150 for i in chosen)
    names = {i.coolprop_name for i in chosen}
    assert {"R1234yf", "n-Propane", "CarbonDioxide", "R123"} <= names  # R123: AR6 90.4
    # R134a 1530 and R152a 164 (AR6; R152a was 138 in AR5); n-pentane: unknown
    assert "R134a" not in names and "R152A" not in names and "n-Pentane" not in names


def test_select_safety_classes_and_zero_odp():
    a1 = F.select(safety_classes=["a1"])
    assert a1 and all(i.safety_class == "A1" for i in a1)
    assert {i.coolprop_name for i in F.select(include=["hcfc", "cfc", "hcfo"], zero_odp=True)} == set()
    with pytest.raises(ValueError, match="allowed"):
        F.select(safety_classes=["C9"])
    with pytest.raises(ValueError):
        F.select(max_gwp=-1)


def test_select_unknown_name_or_family_raises_with_close_matches():
    with pytest.raises(F.UnknownFluidError, match="hydrocarbon"):
        F.select(include=["hydrocarbons"])
    with pytest.raises(F.UnknownFluidError, match="R134a"):
        F.select(exclude=["R134"])


def test_catalogue_frame_columns_and_units():
    frame = F.catalogue_frame(F.select(include=["water"]))
    assert list(frame.columns) == [
        "coolprop_name", "display_name", "family", "safety_class", "gwp100", "odp", "T_crit_C",
        "p_crit_bar", "T_nbp_C", "M_g_mol", "curve_type", "max_temperature_C", "flammable", "toxicity",
    ]
    row = frame.iloc[0]
    assert row["T_crit_C"] == pytest.approx(373.946, abs=1e-3)  # IAPWS-95: 647.096 K
    assert row["p_crit_bar"] == pytest.approx(220.64, abs=1e-3)  # IAPWS-95: 22.064 MPa
    assert len(F.catalogue_frame()) == len(F.load_catalogue())


def test_cautions_text_covers_the_required_topics():
    text = F.CAUTIONS.lower()
    for word in ("flammable", "toxic", "asphyxiate", "gwp", "f-gas", "pressure equipment",
                 "preliminary screening", "local codes", "licensed engineers"):
        assert word in text, word


def test_catalogue_file_override_and_bad_file_messages(tmp_path, monkeypatch):
    header = ",".join(F._COLUMNS)
    good = tmp_path / "mini.csv"
    good.write_text(textwrap.dedent(f"""\
        # a two-fluid test catalogue
        {header}
        Water,steam,natural,A1,test,0,test,other,0,test,,unknown
        n-Pentane,pentane,hydrocarbon,A3,test,,unknown,none,0,test,250,test
        """), encoding="utf-8")
    monkeypatch.setenv(F.CATALOGUE_ENV, str(good))
    assert [i.display_name for i in F.load_catalogue()] == ["steam", "pentane"]
    assert F.get_info("pentane").max_temperature_C == 250.0

    bad = tmp_path / "bad.csv"
    bad.write_text(f"{header}\nWater,water,natural,A9,test,0,test,other,0,test,,unknown\n", encoding="utf-8")
    monkeypatch.setenv(F.CATALOGUE_ENV, str(bad))
    with pytest.raises(F.CatalogueError, match=r"bad\.csv, line 2: safety_class 'A9'"):
        F.load_catalogue()

    bad.write_text(f"{header}\nPentane,pentane,hydrocarbon,A3,test,,unknown,none,0,,,unknown\n", encoding="utf-8")
    with pytest.raises(F.CatalogueError, match="n-Pentane"):  # not a HEOS name; close match named
        F.load_catalogue()

    monkeypatch.setenv(F.CATALOGUE_ENV, str(tmp_path / "missing.csv"))
    with pytest.raises(F.CatalogueError, match="missing.csv: cannot read"):
        F.load_catalogue()
