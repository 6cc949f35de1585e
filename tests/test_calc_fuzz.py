"""Fuzzing the calculators' arguments: never a crash, a hang, a traceback or bad JSON.

Each example takes a valid command line of one calculator and replaces the
value of one option (or adds one) with a value drawn from what a careless or
hostile user might type: wrong types, empty text, NaN and infinity, huge and
tiny numbers, negative values, thousands of digits, digits outside ASCII,
control characters, stray separators. The run must end with exit 0, 1 or 2
(docs/calculators.md), one line on stderr when it fails, no traceback, and with
``--json`` a document that a strict JSON parser reads. Seeded (the "beamplan"
hypothesis profile in conftest.py derandomizes); 300 examples in the suite, and
a longer run with e.g. ``BEAMPLAN_FUZZ_EXAMPLES=20000 HYPOTHESIS_PROFILE=explore``.
"""

from __future__ import annotations

import contextlib
import csv
import io
import json
import os
import time
from typing import Any

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from beamplan.cli.main import main

# A valid command line of each calculator, and the options whose values are fuzzed.
BASE: dict[str, tuple[list[str], list[str]]] = {
    "mirror": (["--grazing", "5deg"],
               ["--grazing", "--wavelength", "--coating", "--density", "--roughness",
                "--polarisation", "--delta-beta", "--steps"]),
    "stack": (["--periods", "20"],
              ["--pair", "--period", "--absorber-fraction", "--periods", "--incidence",
               "--wavelength", "--cap", "--cap-thickness", "--substrate", "--roughness",
               "--polarisation", "--density", "--steps"]),
    "drift": (["--gas", "H2", "--pressure", "2Pa", "--length", "40m"],
              ["--gas", "--pressure", "--length", "--temperature", "--wavelength", "--steps"]),
    "demand": (["--dose", "30mJ/cm^2", "--wph", "150"],
               ["--dose", "--wph", "--power", "--wavelength", "--field", "--field-width",
                "--fields", "--slit-height", "--wafer-overhead", "--stage-speed",
                "--reflections", "--mirror-reflectivity", "--pellicle", "--dose-margin",
                "--critical-area", "--noise"]),
    "undulator": (["--energy", "1GeV", "--period", "2.8cm", "--k", "2.32"],
                  ["--energy", "--period", "--k", "--harmonic", "--check", "--tolerance"]),
    "beam": (["--size", "100um", "--divergence", "20urad", "--distance", "10m", "--grazing",
              "2deg", "--power", "1kW", "--reflectivity", "0.8"],
             ["--size", "--divergence", "--widths", "--distance", "--grazing", "--power",
              "--reflectivity", "--absorptance", "--wavelength", "--m2", "--mirror-length",
              "--mirror-width", "--radius", "--focal-length", "--substrate", "--steps"]),
}

UNITS = ["", "deg", "mrad", "nm", "m", "Pa", "mbar", "K", "degC", "g/cm^3", "W", "kW",
         "mJ/cm^2", "wph", "s", "m/s", "T", "GeV", "%", "/um", "nm^2", "kg", "eV"]
NUMBERS = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(min_value=-10**6, max_value=10**6).map(str),
    st.sampled_from(["0", "-0", "1e308", "1e-308", "1e400", "-1e400", "nan", "inf", "-inf",
                     "1_000", "0x10", "1,5", "١٣", "３", "²", "9" * 5000, "0." + "0" * 3000 + "1",
                     "1e999999999", ".", "-", "+", "e5", "1e", "5..6", "1/0"]),
)
WEIRD = st.sampled_from([
    "", " ", "\x00", "\x1b[2J", "5deg\n6deg", "\t", "s", "p", "unpolarised", "s=", "s=2",
    "p=-1", "none", "Ru", "air", "Mo/Si", "Mo/", "/Si", "H2O", "CH4", "Qq", "((((((", "a" * 300,
    "2deg..10deg", "2deg..10deg/9", "2deg..10deg/0", "2deg..2deg/5", "1nm..2nm/99999",
    "1m..2m..3m/4", "2deg,", ",", ",,,", "2deg,4deg,8deg", "Ru=12.2g/cm^3", "Ru=", "=12g/cm^3",
    "26mm:33mm", "26mm:", ":", "0.02,0.001", "1e300,1e300", "nan,nan", "5deg/3",
    "1GeV..2GeV/3", "-5deg", "--json", "—5deg", "5 deg", "5°", "½", "1e-30m", "1e30m",
])
VALUES = st.one_of(
    WEIRD,
    st.tuples(NUMBERS, st.sampled_from(UNITS)).map("".join),
    st.text(max_size=30),
)


def _run(argv: list[str]) -> tuple[int, str, str, float]:
    out, err = io.StringIO(), io.StringIO()
    start = time.perf_counter()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(argv)
    return code, out.getvalue(), err.getvalue(), time.perf_counter() - start


def _strict(constant: str) -> Any:
    raise ValueError(f"not strict JSON: {constant}")


EXAMPLES = int(os.environ.get("BEAMPLAN_FUZZ_EXAMPLES", "300"))


@settings(max_examples=EXAMPLES, suppress_health_check=[HealthCheck.too_slow])
@given(calculator=st.sampled_from(sorted(BASE)), data=st.data(), value=VALUES,
       shape=st.sampled_from(["text", "--json", "--csv"]))
def test_any_calculator_argument_ends_cleanly(calculator: str, data: st.DataObject, value: str,
                                               shape: str) -> None:
    as_json = shape == "--json"
    base, options = BASE[calculator]
    option = data.draw(st.sampled_from(options), label="option")
    argv = list(base)
    if option in argv:
        argv[argv.index(option) + 1] = value
    else:
        argv += [option, value]
    if calculator == "demand" and option == "--power":  # --power replaces --wph
        at = argv.index("--wph")
        del argv[at:at + 2]
    if calculator == "beam" and option in ("--wavelength", "--absorptance"):  # alternatives
        other = "--divergence" if option == "--wavelength" else "--reflectivity"
        at = argv.index(other)
        del argv[at:at + 2]
    argv = ["calc", calculator, *argv, *([] if shape == "text" else [shape])]
    code, out, err, elapsed = _run(argv)
    assert code in (0, 1, 2), (argv, code, err[-500:])
    assert "Traceback" not in err and "internal error" not in err, (argv, err[-500:])
    assert elapsed < 10.0, (argv, elapsed)  # a bound far above any real run (a hang guard)
    if code == 1 and out:  # 'undulator --check' not reachable: the report, then exit 1
        assert calculator == "undulator" and err == "", (argv, err)
    elif code != 0:
        assert err.count("\n") == 1 and err.startswith("beamplan: error: "), (argv, err)
        assert len(err) < 600, (argv, err)  # a short excerpt, never the whole value
        assert not any(c in err for c in "\x00\x1b\r"), (argv, err)
    if as_json and out:
        document = json.loads(out, parse_constant=_strict)
        assert document["format"] == "beamplan-calc/2" and document["calculator"] == calculator
    if shape == "--csv" and out:  # a header, then rows of as many cells
        rows = list(csv.reader(io.StringIO(out)))
        assert len(rows) >= 2 and all(len(r) == len(rows[0]) for r in rows), (argv, out)
    if code == 0 and not as_json:
        assert out.endswith("\n") and err == ""
