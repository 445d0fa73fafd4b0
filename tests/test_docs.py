"""The README's table of bad inputs is the generated one in docs/bad_inputs.md
(which tests/test_validation.py checks against the code)."""
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_readme_carries_the_bad_input_table():
    doc = (ROOT / "docs" / "bad_inputs.md").read_text(encoding="utf-8")
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    rows = [line for line in doc.splitlines() if line.startswith("| ")]
    assert len(rows) > 20
    missing = [r for r in rows if r not in readme]
    assert not missing, f"README lacks {len(missing)} rows of docs/bad_inputs.md, e.g. {missing[0]}"


def test_readme_first_output_is_what_the_command_prints():
    """The README's "What it prints" block (from "Derived" on) is the output
    of the command it shows, so the first thing a new user compares is true."""
    from click.testing import CliRunner
    from probe.cli import cli

    root = Path(__file__).resolve().parents[1]
    readme = (root / "README.md").read_text()
    start = readme.index("$ probe rates examples/box3d_supersonic.toml\n")
    shown = readme[start:readme.index("```", start)].splitlines()
    shown = shown[shown.index("Derived"):]
    printed = CliRunner().invoke(cli, ["rates", str(root / "examples/box3d_supersonic.toml")])
    lines = printed.output.splitlines()
    assert shown == lines[lines.index("Derived"):]
