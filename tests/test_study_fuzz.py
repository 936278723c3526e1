"""Property-based fuzzing of study files with Hypothesis (hypothesis.readthedocs.io).

Three generators feed ``orcscreen check``: structured mutations of the shipped studies (wrong
types, missing and unknown keys, extreme and non-finite numbers, long strings, deep nesting,
absurd sweeps), byte-level mutations of the shipped files (byte-order marks, binary data,
truncation, long number literals, deep brackets), and whole documents of random keys and values.
The property, for every input: `check` exits 0 or 2, never prints a traceback or an internal
error, and every line of an exit-2 message starts with the file's path followed by a key of the
document (or a section of the schema) or names a line of the file.

Profiles: the default one is derandomised (the same examples on every run, so CI is stable) and
takes well under a minute; set ``ORCSCREEN_FUZZ_PROFILE=nightly`` for a larger random search::

    ORCSCREEN_FUZZ_PROFILE=nightly python -m pytest tests/test_study_fuzz.py -q -p no:cacheprovider
"""

from __future__ import annotations

import copy
import datetime as dt
import io
import json
import math
import os
import re
import tempfile
import tomllib
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from orcscreen import cli
from orcscreen.study import NUMERIC_PATHS, _TOP_KEYS

STUDIES = sorted((Path(__file__).resolve().parent.parent / "studies").glob("*.toml"))
SHIPPED_BYTES = [p.read_bytes() for p in STUDIES]
SHIPPED = [tomllib.loads(b.decode("utf-8")) for b in SHIPPED_BYTES]

_PROFILES = {
    # derandomised: the same examples on every run; about 10-20 s on the 2-core machines
    "default": dict(max_examples=400, derandomize=True),
    # a larger random search for nightly runs (about 10 minutes)
    "nightly": dict(max_examples=25000, derandomize=False),
}
PROFILE = os.environ.get("ORCSCREEN_FUZZ_PROFILE", "default")
FUZZ = settings(**_PROFILES[PROFILE], deadline=None, database=None, print_blob=True,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                       HealthCheck.filter_too_much])

# -- values ---------------------------------------------------------------------------------

EXTREMES = [0, -0.0, 1, -1, 1e-300, 5e-324, 1e308, -1e308, 10**30, -(10**30), 10**400,
            math.inf, -math.inf, math.nan, 1e10, 273.15, -273.15, 0.999999, 1.000001]
numbers = st.one_of(st.integers(min_value=-(10**40), max_value=10**40),
                    st.floats(allow_nan=True, allow_infinity=True), st.sampled_from(EXTREMES))
texts = st.one_of(st.text(max_size=30), st.sampled_from(["", "optimise", "optimize", "all", "water",
                                                         "fluid", "R245fa", "Water", "mole", "basic",
                                                         "x" * 5000, "\u202e\u0000"]))
scalars = st.one_of(numbers, texts, st.booleans(),
                    st.datetimes(min_value=dt.datetime(1, 1, 1), max_value=dt.datetime(9999, 1, 1)))
values = st.recursive(scalars, lambda inner: st.one_of(
    st.lists(inner, max_size=5), st.dictionaries(st.text(max_size=12), inner, max_size=4)),
    max_leaves=12)


def deep(depth: int, leaf: object = 1) -> object:
    """A value nested ``depth`` levels deep, alternating arrays and tables."""
    for i in range(depth):
        leaf = [leaf] if i % 2 else {"a": leaf}
    return leaf


# -- TOML text ------------------------------------------------------------------------------

def toml_value(v: object) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)  # JSON's escapes are TOML's
    if isinstance(v, dt.datetime):
        return v.isoformat()
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ", ".join(f"{json.dumps(k)} = {toml_value(x)}" for k, x in v.items()) + "}"
    raise TypeError(type(v))


def toml_text(doc: dict) -> str:
    """A TOML document: top-level values first, then one [table] per section (inline below)."""
    lines = [f"{json.dumps(k)} = {toml_value(v)}" for k, v in doc.items() if not isinstance(v, dict)]
    for k, v in doc.items():
        if isinstance(v, dict):
            lines.append(f"[{json.dumps(k)}]")
            lines += [f"{json.dumps(kk)} = {toml_value(vv)}" for kk, vv in v.items()]
    return "\n".join(lines) + "\n"


# -- the property ---------------------------------------------------------------------------

def check_exits_0_or_2_with_named_messages(data: bytes) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "study.toml"
        path.write_bytes(data)
        out, err = io.StringIO(), io.StringIO()
        with redirect_stdout(out), redirect_stderr(err):
            code = cli.main(["check", str(path)])
    text = out.getvalue() + err.getvalue()
    assert code in (0, 2), text
    assert "Traceback" not in text and "internal error" not in text, text
    if code != 2:
        return
    try:  # keys of the document, when it parses: a message may start with any of them
        top = tomllib.loads(data.decode("utf-8").removeprefix("\ufeff"))
        keys = list(top)
    except (ValueError, RecursionError):
        keys = []
    lines = [line for line in err.getvalue().splitlines() if line.strip()]
    assert lines, text
    prefix = f"{path}: "
    for line in lines:
        assert line.startswith(prefix), line
        rest = line[len(prefix):]
        # bare or quoted, as TOML writes a key (an empty key only quoted)
        shown = [*_TOP_KEYS, *(k for k in keys if k), *(json.dumps(k) for k in keys)]
        named = any(rest.startswith((k, f"[{k}]")) for k in shown)
        assert named or re.search(r"\bline \d+", rest), line


# -- generators -----------------------------------------------------------------------------

@st.composite
def mutated_study(draw) -> dict:
    doc = copy.deepcopy(draw(st.sampled_from(SHIPPED)))
    for _ in range(draw(st.integers(1, 4))):
        op = draw(st.sampled_from(["set", "number", "number", "kind", "delete", "unknown", "sweep",
                                   "deep", "section"]))
        sections = [k for k, v in doc.items() if isinstance(v, dict)] or ["source"]
        section = draw(st.sampled_from(sections))
        table = doc.setdefault(section, {}) if isinstance(doc.get(section, {}), dict) else {}
        if op == "set" and table:
            table[draw(st.sampled_from(sorted(table)))] = draw(values)
        elif op == "number":  # a numeric setting of the schema, to any number: reaches the models
            section_name, key = draw(st.sampled_from(NUMERIC_PATHS)).split(".")
            target = doc.setdefault(section_name, {})
            if isinstance(target, dict):
                target[key] = draw(numbers)
        elif op == "kind":
            target = doc.setdefault(draw(st.sampled_from(["source", "sink"])), {})
            if isinstance(target, dict):
                target["kind"] = draw(st.sampled_from(["water", "brine", "thermal-oil", "flue-gas",
                                                       "fluid", "air"]))
        elif op == "delete":
            if table and draw(st.booleans()):
                table.pop(draw(st.sampled_from(sorted(table))))
            else:
                doc.pop(section, None)
        elif op == "unknown":
            table[draw(st.text(min_size=1, max_size=20))] = draw(values)
        elif op == "sweep":
            path = draw(st.one_of(st.sampled_from(NUMERIC_PATHS), st.text(max_size=25)))
            spec = draw(st.one_of(
                st.lists(numbers, max_size=6),
                st.fixed_dictionaries({"start": numbers, "stop": numbers, "step": numbers}),
                st.dictionaries(st.sampled_from(["start", "stop", "step", "end"]), values, max_size=4),
                values))
            sweep = doc.setdefault("sweep", {})
            if isinstance(sweep, dict):
                sweep[path] = spec
        elif op == "deep":
            table[draw(st.sampled_from(sorted(table) or ["x"]))] = deep(draw(st.integers(2, 60)))
        elif op == "section":
            doc[section] = draw(values)
    return doc


@st.composite
def mutated_bytes(draw) -> bytes:
    data = bytearray(draw(st.sampled_from(SHIPPED_BYTES)))
    for _ in range(draw(st.integers(1, 3))):
        op = draw(st.sampled_from(["bom", "insert", "truncate", "flip", "digits", "brackets",
                                   "dotted", "duplicate-line"]))
        at = draw(st.integers(0, len(data)))
        if op == "bom":
            data[0:0] = b"\xef\xbb\xbf"
        elif op == "insert":
            data[at:at] = draw(st.binary(min_size=1, max_size=40))
        elif op == "truncate":
            del data[at:]
        elif op == "flip" and data:
            data[min(at, len(data) - 1)] ^= 1 << draw(st.integers(0, 7))
        elif op == "digits":
            data += f"\n[study]\nname = 1{'0' * draw(st.integers(10, 12000))}\n".encode()
        elif op == "brackets":
            n = draw(st.integers(10, 5000))
            data += f"\nx = {'[' * n}{']' * n}\n".encode()
        elif op == "dotted":
            n = draw(st.integers(2, 5000))
            data += f"\n{'.'.join(['k'] * n)} = 1\n".encode()
        elif op == "duplicate-line":
            lines = bytes(data).split(b"\n")
            i = draw(st.integers(0, len(lines) - 1))
            lines.insert(i, lines[i])
            data = bytearray(b"\n".join(lines))
    return bytes(data)


random_documents = st.dictionaries(
    st.one_of(st.sampled_from(_TOP_KEYS), st.text(max_size=10)),
    st.one_of(values, st.dictionaries(st.text(max_size=12), values, max_size=6)), max_size=6)


# -- tests ----------------------------------------------------------------------------------

def test_shipped_studies_pass_the_property():
    for data in SHIPPED_BYTES:
        check_exits_0_or_2_with_named_messages(data)


@FUZZ
@given(mutated_study())
def test_mutated_shipped_studies(doc):
    check_exits_0_or_2_with_named_messages(toml_text(doc).encode("utf-8", "surrogatepass"))


@FUZZ
@given(mutated_bytes())
def test_byte_mutations_of_shipped_files(data):
    check_exits_0_or_2_with_named_messages(data)


@FUZZ
@given(random_documents)
def test_random_documents(doc):
    check_exits_0_or_2_with_named_messages(toml_text(doc).encode("utf-8", "surrogatepass"))
