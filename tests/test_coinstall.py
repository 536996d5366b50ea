"""docsegment installs beside python-daemon: the watcher's import name cannot clash with it.

python-daemon (a general-purpose daemonising library that pipeline schedulers depend on) owns the
top-level import name `daemon`. Our watcher lives in the repository folder `daemon/` but installs
as `segment.daemon`. This test builds a fresh virtual environment holding both, installs
docsegment from this checkout as a wheel would (not editable), and uses both from a neutral folder.
"""

from __future__ import annotations

import os
import subprocess
import sys
import sysconfig
import textwrap
from pathlib import Path

import pytest

from tests.conftest import ROOT

pytestmark = pytest.mark.slow

USE_BOTH = textwrap.dedent(
    """
    import json, sys
    from pathlib import Path

    import daemon                      # python-daemon
    import segment
    import segment.daemon              # ours


    def main() -> None:
        assert hasattr(daemon, "DaemonContext"), daemon.__file__
        assert "segment" not in Path(daemon.__file__).parts, daemon.__file__
        src, out = Path(sys.argv[1]), Path(sys.argv[2])
        segment.daemon.reconcile(src, out, segment.Settings(max_tokens=128))
        lines = (out / "chunks" / "page.md.jsonl").read_text().splitlines()
        print(json.dumps({
            "daemon_context": daemon.DaemonContext.__name__,
            "segment_file": segment.__file__,
            "breadcrumbs": [json.loads(line)["breadcrumb"] for line in lines],
        }))


    if __name__ == "__main__":  # worker processes import this module again
        main()
    """
)


def _run(cmd: list[str], **kwargs: object) -> subprocess.CompletedProcess[str]:
    return subprocess.run(cmd, capture_output=True, text=True, timeout=600, check=False, **kwargs)  # type: ignore[call-overload, no-any-return]


def test_docsegment_and_python_daemon_work_in_one_environment(tmp_path: Path) -> None:
    pytest.importorskip("daemon", reason="python-daemon is a test dependency (pip install '.[test]')")
    venv = tmp_path / "venv"
    made = _run([sys.executable, "-m", "venv", str(venv)])
    assert made.returncode == 0, made.stderr
    python = venv / "bin" / "python"
    # The dependencies (spaCy, pymupdf...) come from this environment through a .pth file, so the
    # test needs no network; docsegment itself and python-daemon are installed into the new venv.
    site = _run(
        [str(python), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"]
    ).stdout.strip()
    # Nothing of the checkout on the path: imports must come from the new venv alone.
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"} | {"PIP_DISABLE_PIP_VERSION_CHECK": "1"}
    wheel_dir = tmp_path / "wheel"
    built = _run(  # built by this environment's setuptools, as a build front end would
        [
            sys.executable,
            "-m",
            "pip",
            "wheel",
            "--no-deps",
            "--no-build-isolation",
            "-w",
            str(wheel_dir),
            str(ROOT),
        ],
        env=env,
    )
    assert built.returncode == 0, built.stdout[-2000:] + built.stderr[-2000:]
    wheel = next(wheel_dir.glob("docsegment-*.whl"))
    installed = _run([str(python), "-m", "pip", "install", "--no-deps", str(wheel)], env=env)
    assert installed.returncode == 0, installed.stderr[-2000:]
    daemon_lib = _run([str(python), "-m", "pip", "install", "--no-deps", "python-daemon"], env=env)
    # Only now the parent's packages join the path (after the venv's own site-packages), so pip
    # above saw neither its docsegment nor its python-daemon as already installed.
    Path(site, "parent-env.pth").write_text(sysconfig.get_paths()["purelib"] + "\n")
    if daemon_lib.returncode != 0:  # no registry: the parent environment's copy is on the path
        assert _run([str(python), "-c", "import daemon.daemon"], env=env).returncode == 0

    src = tmp_path / "docs"
    src.mkdir()
    (src / "page.md").write_text(
        "# Harbour crane\n\nThe crane lifts forty tonnes.\n\n## Service\n\nOil monthly.\n"
    )
    work = tmp_path / "elsewhere"  # not the checkout: imports must come from the installed wheel
    work.mkdir()
    script = work / "use_both.py"
    script.write_text(USE_BOTH)
    ran = _run([str(python), str(script), str(src), str(tmp_path / "out")], cwd=work, env=env)
    assert ran.returncode == 0, ran.stderr[-3000:]
    result = __import__("json").loads(ran.stdout.strip().splitlines()[-1])
    assert result["daemon_context"] == "DaemonContext"
    assert str(venv) in result["segment_file"], "segment must come from the new venv's wheel install"
    assert result["breadcrumbs"] and result["breadcrumbs"][0][0] == "Harbour crane"
    # The console script of the wheel runs too.
    cli = _run([str(venv / "bin" / "segment"), "chunks", str(src / "page.md")], cwd=work, env=env)
    assert cli.returncode == 0 and "forty tonnes" in cli.stdout, cli.stderr[-2000:]
