"""Paths shared by the tour scripts: the bundled scenarios and the output
folder (the first command-line argument, else this folder)."""
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
SCENARIOS = HERE.parent


def scenario(name):
    return str(SCENARIOS / f"{name}.toml")


def output(filename, argv=None):
    argv = sys.argv[1:] if argv is None else argv
    folder = Path(argv[0]) if argv else HERE
    folder.mkdir(parents=True, exist_ok=True)
    return folder / filename
