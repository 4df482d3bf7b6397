"""The built wheel, installed into a fresh virtual environment, works outside the checkout.

Builds the wheel from this tree, installs it (no dependencies) into a new venv that borrows
the third-party packages of the running one through a ``.pth`` line, then, from a folder
outside the repository: the package comes from the new venv; ``o2transit evaluate`` solves
an installed example scenario; ``o2transit serve`` answers on every screen, with the
scenario picker, the example ascents and the lessons filled from the installed package
data. A missing subpackage, data file or entry point fails here.
"""

from __future__ import annotations

import json
import os
import socket
import subprocess
import sys
import sysconfig
import time
import urllib.request
import venv
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


def _run(*cmd, cwd, timeout=180, **kw):
    return subprocess.run(
        [str(c) for c in cmd],
        check=False,
        cwd=cwd,
        capture_output=True,
        text=True,
        timeout=timeout,
        **kw,
    )


@pytest.fixture(scope="module")
def installed(tmp_path_factory):
    """(python, o2transit command, site-packages, outside folder) of a fresh install."""
    tmp = tmp_path_factory.mktemp("wheel")
    built = _run(
        sys.executable,
        "-m",
        "pip",
        "wheel",
        "--no-deps",
        "--no-build-isolation",
        "-q",
        "-w",
        tmp / "dist",
        ROOT,
        cwd=tmp,
    )
    assert built.returncode == 0, built.stderr
    (wheel,) = (tmp / "dist").glob("o2transit-*.whl")
    env_dir = tmp / "venv"
    venv.EnvBuilder(with_pip=True).create(env_dir)
    py = env_dir / "bin" / "python"
    inst = _run(py, "-m", "pip", "install", "-q", "--no-deps", "--no-index", wheel, cwd=tmp)
    assert inst.returncode == 0, inst.stderr
    site = Path(
        _run(
            py, "-c", "import sysconfig; print(sysconfig.get_path('purelib'))", cwd=tmp
        ).stdout.strip()
    )
    # third-party packages (panel, numpy, ...) from the running venv, after the new site
    (site / "_o2transit_test_deps.pth").write_text(sysconfig.get_path("purelib") + "\n")
    outside = tmp / "elsewhere"
    outside.mkdir()
    (outside / "model.py").write_text("raise SystemExit('a user file named model.py')\n")
    return py, env_dir / "bin" / "o2transit", site, outside, wheel


def test_wheel_carries_packages_data_and_marker(installed):
    *_, wheel = installed
    names = set(zipfile.ZipFile(wheel).namelist())
    for required in (
        "o2transit/__init__.py",
        "o2transit/py.typed",
        "o2transit/cli.py",
        "o2transit/model/transport.py",
        "o2transit/dashboard/app.py",
        "o2transit/dashboard/case/state.py",
        "o2transit/dashboard/bedside/state.py",
        "o2transit/dashboard/ascent/state.py",
        "o2transit/dashboard/lecture/state.py",
        "o2transit/scenarios/fever.toml",
        "o2transit/scenarios/ascents/slow-to-5300m.toml",
        "o2transit/scenarios/lessons/rest-to-altitude.toml",
    ):
        assert required in names, required
    assert not any(n.startswith(("model/", "dashboard/", "tests/")) for n in names)


def test_package_comes_from_the_install_and_a_user_model_py_does_not_shadow_it(installed):
    py, _, site, outside, _ = installed
    out = _run(
        py,
        "-c",
        "import o2transit, o2transit.model as m; "
        "print(o2transit.__file__); print(m.__file__); print(o2transit.__version__)",
        cwd=outside,
    )
    assert out.returncode == 0, out.stderr
    pkg, model, version = out.stdout.split()
    assert Path(pkg).is_relative_to(site) and Path(model).is_relative_to(site)
    assert not Path(pkg).is_relative_to(ROOT)
    assert version.count(".") == 2


def test_evaluate_runs_an_installed_example(installed):
    _, cmd, site, outside, _ = installed
    fever = site / "o2transit" / "scenarios" / "fever.toml"
    out = _run(cmd, "evaluate", fever, "--json", cwd=outside)
    assert out.returncode == 0, out.stderr
    (record,) = json.loads(out.stdout)
    assert record["scenario"] == "Fever, 39.5 °C"
    assert 0.9 < record["arterial"]["so2"] < 1.0


def test_pickers_list_the_installed_examples(installed):
    # The case screen's scenario picker, the planner's examples and the lecture's lessons,
    # read from the installed package data by the screens' own state classes.
    py, _, site, outside, _ = installed
    code = (
        "from o2transit.dashboard.case.state import CaseState\n"
        "from o2transit.dashboard.ascent.state import AscentWorkspace\n"
        "from o2transit.dashboard.lecture.state import LectureState\n"
        "import json\n"
        "print(json.dumps({'scenarios': list(CaseState().scenario_choices()),\n"
        "  'ascents': [str(p) for p in AscentWorkspace.example_files()],\n"
        "  'lessons': [l.name for l in LectureState().lessons.values()]}))\n"
    )
    out = _run(py, "-c", code, cwd=outside)
    assert out.returncode == 0, out.stderr
    found = json.loads(out.stdout.strip().splitlines()[-1])
    assert any("Fever" in s for s in found["scenarios"]), found["scenarios"]
    assert len(found["scenarios"]) >= 10
    assert len(found["ascents"]) >= 3
    assert all(Path(p).is_relative_to(site) for p in found["ascents"])
    assert any("Where the oxygen goes" in name for name in found["lessons"])


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def test_serve_answers_every_screen_with_installed_examples(installed):
    _, cmd, _, outside, _ = installed
    port = _free_port()
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    server = subprocess.Popen(
        [str(cmd), "serve", "--port", str(port), "--no-show"],
        cwd=outside,
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
        text=True,
    )
    try:
        pages = {}
        deadline = time.monotonic() + 90
        for path in ("/", "/ascent", "/lecture"):
            while path not in pages:
                try:
                    url = f"http://127.0.0.1:{port}{path}"
                    with urllib.request.urlopen(url, timeout=60) as r:
                        assert r.status == 200
                        pages[path] = r.read().decode()
                except OSError:
                    assert server.poll() is None, server.stdout.read()
                    assert time.monotonic() < deadline, f"no answer on {path}"
                    time.sleep(0.2)
        assert all("o2transit" in html for html in pages.values())
    finally:
        server.terminate()
        server.wait(timeout=20)
