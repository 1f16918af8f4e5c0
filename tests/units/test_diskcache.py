"""The on-disk memo of unit conversions: a second process reads known spellings without pint."""
import json
import subprocess
import sys

CODE = ("import sys; from catalog.units import parse_quantity; "
        "v = parse_quantity('12.5 oz-in', 'torque'); "
        "print(repr(v), 'pint' in sys.modules)")


def run(env):
    out = subprocess.run([sys.executable, "-c", CODE], capture_output=True, text=True, check=True, env=env)
    value, pint_loaded = out.stdout.split()
    return float(value), pint_loaded == "True"


def test_second_process_needs_no_pint(tmp_path, monkeypatch):
    import os

    env = dict(os.environ, MOTORSHELF_CACHE_DIR=str(tmp_path))
    first, pint_first = run(env)
    second, pint_second = run(env)
    # NIST SP 811 (2008) App. B.8: 1 ozf·in = 7.061552e-3 N·m
    assert abs(first - 12.5 * 7.061551814226044e-3) < 1e-15
    assert second == first
    assert pint_first and not pint_second
    memo = json.loads(next(tmp_path.glob("unit-conversions-*.json")).read_text(encoding="utf-8"))
    assert any(key.endswith("\x1foz-in") for key in memo)


def test_memo_can_be_switched_off(tmp_path):
    import os

    env = dict(os.environ, MOTORSHELF_CACHE_DIR=str(tmp_path), MOTORSHELF_NO_CACHE="1")
    run(env)
    _, pint_loaded = run(env)
    assert pint_loaded
    assert not list(tmp_path.glob("unit-conversions-*.json"))


def test_unwritable_folder_is_ignored(tmp_path):
    import os

    blocker = tmp_path / "file"
    blocker.write_text("not a folder", encoding="utf-8")
    env = dict(os.environ, MOTORSHELF_CACHE_DIR=str(blocker / "sub"))
    value, _ = run(env)
    assert abs(value - 12.5 * 7.061551814226044e-3) < 1e-15
