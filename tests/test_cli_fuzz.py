"""The command line over random and hostile arguments: exit 0 or 2, a refusal is one line, never a traceback
(issue 10). In-process through ventset.cli.main, a few hundred examples (HYPOTHESIS_PROFILE=thorough: 10,000)."""

from __future__ import annotations

import contextlib
import io
import json
import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from ventset.cli import main
from ventset.fields import FIELDS

HOSTILE_TEXT = ["", " ", "nan", "-inf", "1e309", "1 9**99999999", "1 10**10**7", "38.5 F", "20\nkg", "\x1b[2J",
                "4.2 \u202ekg", '<img src="/dev/zero">', "\udcff", "x" * 700, "0", "-0", "1,5", "١٢", "20 kg kg",
                "5 mmHg", "3 %", "1e-320", "9" * 400, "Rex\r\nSet tidal volume 999 mL", "=", "hme=", "=3 mL"]
NUMBERS = st.one_of(st.floats(allow_nan=True, allow_infinity=True).map(repr), st.integers().map(str),
                    st.sampled_from(["20 kg", "44 lb", "5.3 kPa", "12 /min", "101 degF", "50 %", "4 mm"]))
VALUES = st.one_of(st.sampled_from(HOSTILE_TEXT), NUMBERS, st.text(max_size=30))
OPTIONS = [f"--{k}" for k in FIELDS] + ["--name", "--custom-species", "--apparatus", "--mode", "--circuit",
                                         "--strategy", "--gas-unit"]
COMMAND = st.sampled_from(["plan", "adjust", "deadspace", "show", "species", "parts", "clinic-parts"])
TITRATE = ["--tidal-volume", "--measured-paco2", "--measured-etco2", "--measured-pao2", "--measured-spo2", "--paco2",
           "--mixed-expired-co2", "--alveolar-co2", "--etco2", "--apparatus-volume"]


@st.composite
def argv(draw):
    command = draw(COMMAND)
    args = [command]
    if command == "clinic-parts":
        sub = draw(st.sampled_from(["list", "add", "remove", "preset-add", "import", "bogus"]))
        args += [sub, *draw(st.lists(VALUES, max_size=3))]
        if draw(st.booleans()):
            args += ["--note", draw(VALUES)]
        return args
    if command == "show":
        return args + [draw(st.sampled_from(["missing.ventcase", "bad.ventcase", "utf16.ventcase", ".", ""]))]
    if draw(st.booleans()):
        args += ["--species", draw(st.sampled_from(["dog", "cat", "mouse", "horse", "unicorn", ""]) | VALUES)]
    for _ in range(draw(st.integers(0, 5))):
        args += [draw(st.sampled_from(OPTIONS + TITRATE)), draw(VALUES)]
    if draw(st.booleans()):
        args.append("--json")
    return args


def _setup_files(folder: Path) -> None:
    (folder / "bad.ventcase").write_bytes(b'{"format": "ventset-case", "schema_version": 1, "request": {"patient": '
                                          b'{"species": "dog", "mass_kg": 1' + b"0" * 400 + b"}}}")
    doc = {"format": "ventset-case", "schema_version": 1, "request": {"patient": {"species": "dog", "mass_kg": 20}}}
    (folder / "utf16.ventcase").write_bytes(json.dumps(doc).encode("utf-16"))


DATA = Path(tempfile.mkdtemp(prefix="ventset-fuzz-"))
_setup_files(DATA)


@settings(suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture], deadline=None)
@given(argv())
def test_any_arguments_exit_0_or_2_with_one_line_and_no_traceback(monkeypatch, args):
    monkeypatch.setenv("VENTSET_DATA_DIR", str(DATA / "data"))
    monkeypatch.chdir(DATA)
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = main(args)
        except SystemExit as exc:  # argparse: usage errors (2) and --help (0)
            code = exc.code if isinstance(exc.code, int) else 2
    text = err.getvalue()
    assert code in (0, 2), (args, code, text)
    assert "Traceback" not in text
    if code == 2:
        assert text.count("\n") == 1 and text.startswith("ventset: "), (args, text)
    assert "\x1b" not in text and "\r" not in text
