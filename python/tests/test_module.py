"""The Python module held to the command line: every number the module gives must equal
the one `concord ... --format json` prints (the JSON contract, src/report/json.rs, and the
README's description of each command), parsed by Python's json, bit for bit."""

import _thread
import json
import threading
from pathlib import Path

import pytest

import concord
from conftest import ROOT, assert_bits_equal, cli_json, run_cli

EXAMPLES = sorted(p.relative_to(ROOT).as_posix() for p in (ROOT / "architectures").glob("*.toml"))
MALFORMED = ROOT / "tests" / "malformed"


def test_the_examples_are_found():
    assert len(EXAMPLES) >= 6


@pytest.mark.parametrize("path", EXAMPLES)
def test_analyze_equals_the_cli_bit_for_bit(path):
    # Source: `concord analyze FILE --format json`.
    expected = cli_json("analyze", path, "--format", "json")
    got = concord.analyze(concord.load(path))
    assert_bits_equal(got, expected)


def test_analyze_with_curves_and_a_tolerance_equals_the_cli():
    path = "architectures/plovrant_swa2_mean.toml"
    # Source: `concord analyze FILE --format json --with-curves --tolerance 1e-9`.
    expected = cli_json(
        "analyze", path, "--format", "json", "--with-curves", "--tolerance", "1e-9"
    )
    got = concord.analyze(concord.load(path), tolerance=1e-9, curves=True)
    assert_bits_equal(got, expected)
    assert got["tolerance"]["abs"] == 1e-9


def test_the_default_tolerance_is_the_one_reported():
    # Source: README, "--tolerance X ... default 1e-11"; the JSON field `tolerance`.
    assert concord.DEFAULT_TOLERANCE == 1e-11
    got = concord.analyze(concord.load("architectures/plovrant_swa2_mean.toml"))
    assert got["tolerance"]["abs"] == concord.DEFAULT_TOLERANCE


def test_loads_equals_load():
    path = "architectures/plovrant_swa2_plausibility.toml"
    text = (ROOT / path).read_text()
    assert_bits_equal(
        concord.analyze(concord.loads(text, path)), concord.analyze(concord.load(path))
    )


def expected_positions(toml: Path):
    """The LINE:COL of each diagnostic a malformed file must give (its .expected file)."""
    out = []
    for line in toml.with_suffix(".expected").read_text().splitlines():
        line = line.strip()
        if not line or line.startswith("#") or line.startswith("errors:"):
            continue
        pos, _fragment = line.split(" | ", 1)
        lin, col = pos.split(":")
        out.append((int(lin), int(col)))
    return out


@pytest.mark.parametrize(
    "name", ["negative_sigma_channel", "unknown_top_key", "type_limit_bool", "signal_cycle"]
)
def test_errors_carry_line_and_column(name):
    path = (MALFORMED / f"{name}.toml").relative_to(ROOT).as_posix()
    with pytest.raises(concord.ArchitectureError) as caught:
        concord.load(path)
    error = caught.value
    # Source: the corpus's .expected file (tests/malformed, tests/model_malformed.rs).
    for line, col in expected_positions(MALFORMED / f"{name}.toml"):
        if line > 0:
            assert f"{path}:{line}:{col}: error:" in str(error)
            assert any(d["line"] == line and d["column"] == col for d in error.diagnostics)
    # Source: the command line prints the same messages after `concord analyze: `.
    done = run_cli("analyze", path, expect_ok=False)
    assert done.returncode == 2
    assert done.stderr.startswith("concord analyze: ")
    assert str(error).strip() in done.stderr


def test_loads_errors_name_the_given_file():
    with pytest.raises(concord.ArchitectureError) as caught:
        concord.loads('name = "x"\nunit = "deg"\n[channels.a]\nsigma = -1\n', "mine.toml")
    assert "mine.toml:4:9: error: channels.a.sigma:" in str(caught.value)


def test_a_bad_tolerance_is_refused_with_the_cli_message():
    arch = concord.load("architectures/plovrant_swa2_mean.toml")
    with pytest.raises(concord.ConcordError) as caught:
        concord.analyze(arch, tolerance=0.5)
    done = run_cli("analyze", arch.path, "--tolerance", "0.5", expect_ok=False)
    assert done.returncode == 2
    # Source: the CLI's message for --tolerance; the module names the option `tolerance`.
    assert "0.5 is not a usable target error" in str(caught.value)
    assert "0.5 is not a usable target error" in done.stderr


def sweep_rows_as_columns(document):
    """The CLI's JSON rows turned into the module's columns (names of the CSV header)."""
    rows = document["rows"]
    cols = {"index": [r["index"] for r in rows], document["vary"]: [r["x"] for r in rows]}
    if document["series"] is not None:
        cols[document["series"]] = [r["series"] for r in rows]
    for k in ["false_alarm", "residual_fit", "spfm", "lfm"]:
        cols[k] = [r[k]["value"] for r in rows]
        cols[f"{k}_error"] = [r[k]["error"] for r in rows]
    cols["asil_spfm"] = [r["asil_spfm"] for r in rows]
    cols["asil_lfm"] = [r["asil_lfm"] for r in rows]
    for i, site in enumerate(document["sites"]):
        s = [r["sites"][i] for r in rows]
        assert all(x["name"] == site for x in s)
        cols[f"{site}.dc"] = [x["dc"]["value"] if x["dc"] else None for x in s]
        cols[f"{site}.dc_error"] = [x["dc"]["error"] if x["dc"] else None for x in s]
        cols[f"{site}.dc_all_dangerous"] = [x["dc_all_dangerous"]["value"] for x in s]
        cols[f"{site}.dc_all_dangerous_error"] = [x["dc_all_dangerous"]["error"] for x in s]
        cols[f"{site}.p_vu"] = [x["p_vu"]["value"] for x in s]
        cols[f"{site}.p_vu_error"] = [x["p_vu"]["error"] for x in s]
        cols[f"{site}.worst_sigma"] = [x["worst_sigma"] for x in s]
    if any("isolation" in r for r in rows):
        for k in ["continues", "shutdown", "fault_stays"]:
            cols[k] = [r["isolation"]["end_states"][k]["value"] for r in rows]
            cols[f"{k}_error"] = [r["isolation"]["end_states"][k]["error"] for r in rows]
        for i, site in enumerate(document["sites"]):
            s = [r["isolation"]["sites"][i] for r in rows]
            assert all(x["name"] == site for x in s)
            for k in ["isolated", "wrong_channel", "none_blamed"]:
                cols[f"{site}.{k}"] = [x[k]["value"] for x in s]
                cols[f"{site}.{k}_error"] = [x[k]["error"] for x in s]
    return cols


def test_sweep_columns_equal_the_cli_rows():
    path = "architectures/plovrant_swa2_mean.toml"
    # Source: `concord sweep FILE --vary ... --series ... --format json` (README, "Design
    # exploration").
    expected = cli_json(
        "sweep", path, "--vary", "safety.limit=1:4", "--points", "7",
        "--series", "checks.ab.limit=1.5,2.5,3.5", "--format", "json",
    )
    got = concord.sweep(
        concord.load(path), "safety.limit=1:4", points=7, series="checks.ab.limit=1.5,2.5,3.5"
    )
    assert len(got["index"]) == 21
    assert_bits_equal(got, sweep_rows_as_columns(expected))


def test_sweep_log_axis_equals_the_cli():
    path = "architectures/plovrant_swa2_shared_ref.toml"
    expected = cli_json(
        "sweep", path, "--vary", "checks.ab.limit=0.5:8", "--points", "5", "--log",
        "--format", "json",
    )
    got = concord.sweep(concord.load(path), "checks.ab.limit=0.5:8", points=5, log=True)
    assert_bits_equal(got, sweep_rows_as_columns(expected))


def test_sweep_isolation_columns_equal_the_cli():
    path = "architectures/plovrant_swa3_median.toml"
    expected = cli_json(
        "sweep", path, "--vary", "checks.ab.limit=1.5,2.5", "--format", "json",
    )
    got = concord.sweep(concord.load(path), "checks.ab.limit=1.5,2.5")
    assert "a_drift.wrong_channel_error" in got
    assert_bits_equal(got, sweep_rows_as_columns(expected))


def test_ctrl_c_stops_a_sweep():
    arch = concord.load("architectures/plovrant_swa2_mean.toml")
    timer = threading.Timer(0.5, _thread.interrupt_main)
    timer.start()
    try:
        with pytest.raises(KeyboardInterrupt):
            # A million points would take many minutes: only the interrupt ends it early.
            concord.sweep(arch, "safety.limit=1:4", points=1_000_000)
    finally:
        timer.cancel()


def test_tune_equals_the_cli():
    path = "architectures/plovrant_swa2_mean.toml"
    # Source: `concord tune FILE --target-dc 95% --format json` (README).
    expected = cli_json("tune", path, "--target-dc", "95%", "--format", "json")
    got = concord.tune(concord.load(path), "95%")
    assert_bits_equal(got, expected)
    got = concord.tune(concord.load(path), 0.95)
    assert_bits_equal(got, expected)


def test_compare_equals_the_cli_apart_from_the_seconds():
    paths = [
        "architectures/plovrant_swa2_mean.toml",
        "architectures/plovrant_swa2_plausibility.toml",
    ]
    # Source: `concord compare FILE... --format json`; `seconds` is a measured time.
    expected = cli_json("compare", *paths, "--format", "json", "--figure", "dc-all-dangerous")
    got = concord.compare([concord.load(p) for p in paths], figure="dc_all_dangerous")
    for doc in (expected, got):
        for row in doc["architectures"]:
            row["seconds"] = 0.0
    assert_bits_equal(got, expected)


def test_version_is_the_cli_version():
    # Source: `concord --version`.
    out = run_cli("--version").stdout.split()
    assert concord.version() == concord.__version__ == out[-1]


def test_results_are_plain_python_objects():
    got = concord.analyze(concord.load("architectures/plovrant_swa2_mean.toml"))
    text = json.dumps(got)  # only dicts, lists, str, float, int, bool and None survive this
    assert json.loads(text) == got


def test_the_readme_example_runs(capsys):
    # Source: README.md, "From Python": its one Python block, run as written.
    text = (ROOT / "README.md").read_text()
    block = text.split("```python\n", 1)[1].split("```", 1)[0]
    assert len(block.strip().splitlines()) <= 12
    exec(compile(block, "README.md", "exec"), {})
    assert "checks.ab.limit" in capsys.readouterr().out
