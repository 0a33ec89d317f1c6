"""The README's demo: analyse the fictional client's four sessions and write the reports.

Runs on a fresh clone: a fresh demo database under ``reports/demo/data``, one
session report per date under ``reports/demo/<date>/`` and the trend report
``reports/demo/history.html``. The client, clinic and clips are invented
(rendered by ``tools/synth``).
"""

from __future__ import annotations

import json
import shutil
import sys
from pathlib import Path

from lean_video.cli import divert_native_stderr, main as cli

REPO = Path(__file__).resolve().parents[1]
CLIPS = REPO / "demo_clips"
OUT = REPO / "reports" / "demo"


def run(out: Path = OUT) -> int:
    manifest = json.loads((CLIPS / "manifest.json").read_text())
    sessions = [c for c in manifest["clips"] if c.get("kind") == "demo"]
    if not sessions:
        print("demo_clips/manifest.json lists no demo sessions", file=sys.stderr)
        return 1
    divert_native_stderr()
    data = out / "data"
    if data.exists():
        shutil.rmtree(data)  # a fresh demo database every time
    for entry in sorted(sessions, key=lambda c: c["session_date"]):
        walk = entry["walk"]
        code = cli([
            "analyse", str(CLIPS / f"{entry['name']}.mp4"), "--out", str(out / entry["session_date"]),
            "--client", entry["client"], "--date", entry["session_date"], "--height-m", str(walk["height_m"]),
            "--mass-kg", str(entry.get("mass_kg", 78)), "--data-dir", str(data), "--force",
        ])
        if code != 0:
            return code
    client = sessions[0]["client"]
    code = cli(["history", client, "--out", str(out), "--data-dir", str(data)])
    if code == 0:
        print(f"\nDemo reports (fictional client {client}):")
        for entry in sorted(sessions, key=lambda c: c["session_date"]):
            print(f"  {out / entry['session_date'] / 'report.html'}")
        print(f"  {out / 'history.html'}  (trend across sessions)")
    return code


if __name__ == "__main__":
    sys.exit(run())
