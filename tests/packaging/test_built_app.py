"""Build the desktop app from packaging/ and use the built binary (packaging/smoke.sh): the
sample project, screenshots of both views, agreement, a dry-run export, install.sh into a
scratch prefix and out again. Several minutes: it installs the build tools and bundles Qt."""

import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]


@pytest.mark.slow
@pytest.mark.timeout(1800)
@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="the smoke script is for Linux")
def test_the_built_app_opens_the_sample_project(tmp_path):
    env = dict(os.environ, CLIPSCRIBE_DIST=str(tmp_path / "dist"), PYTHON=sys.executable)
    env.pop("QT_QPA_PLATFORM", None)  # the script sets what the built binary gets
    run = subprocess.run(["bash", str(ROOT / "packaging" / "smoke.sh")], cwd=tmp_path, env=env,
                         capture_output=True, text=True)
    report = run.stdout[-4000:] + run.stderr[-4000:]
    assert run.returncode == 0, report
    for line in ("sample project built", "work view drawn: 1440x900", "review desk drawn: 1440x900",
                 "agreement --json", "install.sh --uninstall leaves nothing", "smoke: all passed"):
        assert line in run.stdout, report
    assert list((tmp_path / "dist").glob("clipscribe-*-py3-none-any.whl"))
    assert list((tmp_path / "dist").glob("clipscribe-*.tar.gz"))
