"""The grammar reaches an installed wheel, and the CLI runs from any directory."""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

ROOT = Path(__file__).parent.parent


def test_wheel_carries_the_grammar(tmp_path):
    subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w", str(tmp_path), str(ROOT)],
                   check=True, capture_output=True)
    (wheel,) = tmp_path.glob("pactlang-*.whl")
    names = zipfile.ZipFile(wheel).namelist()
    assert "pactlang/_grammar/pactlang.lark" in names
    packaged = zipfile.ZipFile(wheel).read("pactlang/_grammar/pactlang.lark").decode()
    assert packaged == (ROOT / "grammar" / "pactlang.lark").read_text()


def test_cli_runs_from_another_directory(tmp_path):
    agreement = ROOT / "agreements" / "channel_dredging.deal"
    out = subprocess.run([sys.executable, "-m", "pactlang", "check", str(agreement)],
                         capture_output=True, text=True, cwd=tmp_path)
    assert out.returncode == 0, out.stdout + out.stderr
