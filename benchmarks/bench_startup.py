"""Start-up: `motorshelf --help`, `--version` and a demo selection, each a fresh process."""
from __future__ import annotations

import os
import subprocess
import sys
import tempfile
from pathlib import Path

from benchmarks.common import median_time, report

ROOT = Path(__file__).resolve().parent.parent
EXE = str(Path(sys.executable).parent / "motorshelf")


#: as a user's shell runs it: compiled modules are cached (a machine that forbids writing them, as
#: some CI runners do, pays compiling every module on every start instead)
ENV = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}


def run(*args):
    subprocess.run([EXE, *args], check=True, capture_output=True, env=ENV)


def main() -> int:
    t_python = median_time(lambda: subprocess.run([sys.executable, "-c", "pass"], check=True, env=ENV), runs=5)
    run("--help")   # warm-up: compiled modules written once
    t_help = median_time(lambda: run("--help"), runs=5)
    report("startup_help", t_help, "s", t_python, "<= 0.3 s", t_help <= 0.3,
           "baseline: a bare Python start; median of 5")
    t_ver = median_time(lambda: run("--version"), runs=5)
    report("startup_version", t_ver, "s", t_python, "<= 0.3 s", t_ver <= 0.3, "median of 5")
    env_file = ROOT / "queries" / "drive_wheel.toml"
    if env_file.exists():
        with tempfile.TemporaryDirectory() as d:
            db = Path(d) / "demo.duckdb"
            subprocess.run([sys.executable, "-m", "catalog.demo", "--db", str(db), "--fresh"], check=True,
                           capture_output=True, cwd=ROOT)
            run("--db", str(db), "select", str(env_file))   # warm-up
            t_sel = median_time(lambda: run("--db", str(db), "select", str(env_file)), runs=3)
            report("startup_demo_selection", t_sel, "s", t_python, "<= 1.5 s", t_sel <= 1.5,
                   "fresh process, demo catalogue, median of 3")
    return 0


if __name__ == "__main__":
    sys.exit(main())
