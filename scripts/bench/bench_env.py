"""Runs a benchmark script inside .venv-bench/ (created and filled on first use), without the
OpenBLAS overrides some machines set (they force a slower kernel)."""
import os
import pathlib
import subprocess
import sys

ROOT = pathlib.Path(__file__).resolve().parents[2]
VENV = ROOT / ".venv-bench"


def enter(script, packages, env_extra=None):
    """Re-executes `script` in the venv unless already there; returns only inside the venv."""
    python = VENV / "bin" / "python"
    if pathlib.Path(sys.prefix).resolve() == VENV.resolve() and "OPENBLAS_CORETYPE" not in os.environ:
        return
    if not python.exists():
        subprocess.run([sys.executable, "-m", "venv", str(VENV)], check=True)
    subprocess.run([str(python), "-m", "pip", "install", "-q", *packages], check=True)
    env = {k: v for k, v in os.environ.items() if k not in ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE")}
    env.update(env_extra or {})
    sys.exit(subprocess.run([str(python), script, *sys.argv[1:]], env=env).returncode)
