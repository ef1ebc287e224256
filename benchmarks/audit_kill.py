"""Kill `strainline report` at random moments and check the output folder (plain script).

    python benchmarks/audit_kill.py [runs] [DIR]

Makes an output set from tests/fixtures/front_small.json, then repeatedly starts
``strainline report DIR``, sends SIGKILL after a random delay (0 to the measured run time) and
checks that DIR holds one complete set (its manifest lists exactly the files present, every one
there) and, after the next run, that nothing is left beside DIR. Prints the counts.
"""
from __future__ import annotations

import json
import random
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
CMD = [sys.executable, "-m", "strainline.optimizer", "report"]


def complete(folder: Path) -> bool:
    """DIR holds a manifest that lists exactly its files."""
    try:
        listed = set(json.loads((folder / "strainline-output.json").read_text())["files"])
    except (OSError, ValueError, KeyError):
        return False
    present = {p.relative_to(folder).as_posix() for p in folder.rglob("*") if p.is_file()}
    return present - {"strainline-output.json"} == listed


def main(runs: int = 30, base: str | None = None) -> None:
    work = Path(base or tempfile.mkdtemp(prefix="strainline-kill-"))
    out = work / "out"
    out.mkdir(parents=True, exist_ok=True)
    shutil.copy(ROOT / "tests" / "fixtures" / "front_small.json", out / "front.json")
    t0 = time.perf_counter()
    subprocess.run(CMD + [str(out), "--quiet"], check=True)
    full = time.perf_counter() - t0
    rng = random.Random(2026)
    consistent = leftovers_after_next = killed = 0
    for _ in range(runs):
        proc = subprocess.Popen(CMD + [str(out), "--quiet"])
        time.sleep(rng.uniform(0, full))
        if proc.poll() is None:
            proc.send_signal(signal.SIGKILL)
            killed += 1
        proc.wait()
        consistent += complete(out)
        subprocess.run(CMD + [str(out), "--quiet"], check=True)      # the next run
        leftovers_after_next += len([p for p in work.iterdir() if p.name != "out"])
    print(f"{runs} runs ({killed} killed mid-run, full run {full:.2f} s): folder complete after the kill "
          f"in {consistent}/{runs}; leftovers after the next run: {leftovers_after_next}")
    shutil.rmtree(work)


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 30, sys.argv[2] if len(sys.argv) > 2 else None)
