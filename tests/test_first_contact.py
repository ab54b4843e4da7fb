"""What a new user meets first: a fast start, templates of every kind that run as written,
honest validation by ``lcoe check``, and progress that names its phases."""

from __future__ import annotations

import io
import json
import re
import subprocess
import sys
import tomllib

import pytest
from conftest import DEMO, ROOT

from lcoe.case.template import KINDS, template_text
from lcoe.cli import main

HEAVY = ("pvlib", "matplotlib", "openpyxl", "scipy", "SALib", "pandas", "numpy")


@pytest.mark.parametrize("argv", [["--help"], ["--version"], ["new", "{tmp}/t.toml"],
                                  ["new", "{tmp}/s.toml", "--kind", "sweep"],
                                  ["new", "--help"]])
def test_light_commands_import_no_scientific_library(tmp_path, argv):
    # The start-up promise: help, version and templates never import the scientific stack.
    argv = [a.format(tmp=tmp_path) for a in argv]
    code = ("import sys\nfrom lcoe.cli import main\n"
            f"try:\n    main({argv!r})\nexcept SystemExit:\n    pass\n"
            f"print('HEAVY', [m for m in {HEAVY!r} if m in sys.modules])")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                       cwd=ROOT, check=True)
    assert "HEAVY []" in r.stdout, r.stdout + r.stderr


@pytest.mark.parametrize("module", ["lcoe.cli", "lcoe"])
def test_version_is_printed(module):
    r = subprocess.run([sys.executable, "-m", module, "--version"], capture_output=True,
                       text=True, cwd=ROOT)
    from lcoe import __version__

    assert r.returncode == 0 and r.stdout.strip() == f"lcoe {__version__}"


@pytest.mark.parametrize("kind", [k for k in KINDS if k != "sweep"])
def test_template_keys_are_commented_with_unit_and_allowed_values(kind):
    text = template_text(kind)
    data = tomllib.loads(text)  # parses as written
    lines = text.splitlines()
    for i, line in enumerate(lines):
        m = re.match(r"^(?:# )?([a-z_0-9]+) = ", line)
        if m and i and lines[i - 1].startswith("# ") and "allowed:" in lines[i - 1]:
            assert re.search(r"\[[^\]]+\]; allowed: ", lines[i - 1]), lines[i - 1]
    active = [ln for ln in lines if re.match(r"^[a-z_0-9]+ = ", ln)]
    for ln in active:  # every active key is documented in the comment block just above it
        j = lines.index(ln)
        block = []
        while j > 0 and lines[j - 1].startswith("# "):
            j -= 1
            block.append(lines[j])
        assert any("allowed:" in b for b in block), ln
    assert "uncertain" in data and "energy" in data["uncertain"] and data["correlation"]
    assert "# [site.monthly]" in text


def test_every_template_runs_as_written(tmp_path):
    # Each kind of case runs with a small sample count; the sweep plan with its technologies.
    for kind in KINDS:
        path = tmp_path / f"{kind}.toml"
        assert main(["new", str(path), "--kind", kind]) == 0
        if kind == "sweep":
            path.write_text(path.read_text().replace("samples = 200", "samples = 8")
                            .replace("chunk_trials = 100", "chunk_trials = 8"))
            assert main(["sweep", str(path), "--out", str(tmp_path / "o_sweep"),
                         "--quiet"]) == 0, kind
            continue
        assert main(["check", str(path)]) == 0, kind
        out = tmp_path / f"o_{kind}"
        assert main(["run", str(path), "--samples", "16", "--sobol", "0", "--out", str(out),
                     "--quiet"]) == 0, kind
        s = json.loads((out / "summary.json").read_text())
        assert s["lcoe"]["real_per_kwh"] > 0, kind
        if kind == "lender":
            assert "bankability" in s


def test_new_refuses_to_overwrite(tmp_path, capsys):
    path = tmp_path / "a.toml"
    assert main(["new", str(path)]) == 0
    assert main(["new", str(path)]) == 2
    assert "add --force" in capsys.readouterr().err


def _case_with(tmp_path, extra: str, name="c.toml"):
    text = DEMO.read_text()
    text = text.replace("[uncertain]\n", "[uncertain]\n" + extra, 1)
    p = tmp_path / name
    p.write_text(text)
    return p


def test_check_says_valid_only_after_the_uncertain_tables_pass(tmp_path, capsys):
    p = _case_with(tmp_path, '"costs.capex_per_kwh" = { dist = "normal", mean = 1, sd = 0.1 }\n')
    assert main(["check", str(p)]) == 2
    out, err = capsys.readouterr()
    assert "valid" not in out
    # The suggestion names the full dotted path, quoted once, as written in the file.
    assert 'did you mean "costs.capex_per_kw"?' in err
    assert "'uncertain." not in err


def test_check_catches_a_bad_correlation_and_tax_schedule(tmp_path, capsys):
    text = DEMO.read_text() + '\n[[correlation]]\nbetween = ["costs.capex_per_kw", ' \
        '"plant.tilt_deg"]\nrank = 0.5\n'
    p = tmp_path / "corr.toml"
    p.write_text(text)
    assert main(["check", str(p)]) == 2
    assert "valid" not in capsys.readouterr().out
    lender = (ROOT / "inputs" / "lender_single_axis.toml").read_text()
    lender = lender.replace('depreciation = "accelerated_5yr"',
                            'depreciation = "straight_line"\ndepreciation_years = 45')
    p = tmp_path / "tax.toml"
    p.write_text(lender)
    assert main(["check", str(p)]) == 2
    out, err = capsys.readouterr()
    assert "valid" not in out and "years" in err


def test_progress_names_each_phase(tmp_path):
    from lcoe.cli.progress import Progress
    from lcoe.export.run_outputs import write_outputs
    from lcoe.study.run import run_case

    stream = io.StringIO()
    seen = []

    class Spy(Progress):
        def __call__(self, stage, done=0, total=0):
            if stage not in seen:
                seen.append(stage)
            super().__call__(stage, done, total)

    bar = Spy(stream=stream, force=True)
    result = run_case(DEMO, samples=32, sobol_base=16, progress=bar)
    write_outputs(result, tmp_path / "o", progress=bar)
    for phase in ("reading weather", "sun positions", "Monte Carlo", "Sobol"):
        assert any(phase in stage for stage in seen), seen  # a phase may share its line
    assert "writing outputs" in seen
    assert "reading weather" in stream.getvalue()
    quiet = io.StringIO()  # not a terminal: nothing written
    Progress(stream=quiet)("Monte Carlo", 1, 2)
    assert quiet.getvalue() == ""
