"""Same file and seed, same design JSON (timing fields aside): alone and four at once.

The reference is the contract's promise itself, checked across processes: the
search is counted in work units and every random choice comes from the seed,
so neither the machine's load nor the order of runs may change a byte.  Four
``python -m synth.cli design`` processes run at once on the shared cores (the
load that used to flip exit codes), then one alone.  No time is measured or
asserted.  The plant is the lead example of K. Ogata, *Modern Control
Engineering*, 4th ed., 2002, sec. 6-8, G(s) = 4 / (s (s + 2)) (from memory).
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

#: Fields of the design JSON that record wall-clock time, not results.
TIMING_FIELDS = ("search_seconds", "family_seconds")

CASE = """\
[plant]
numerator = [4.0]
denominator = [1.0, 2.0, 0.0]

[requirements]
max_overshoot_percent = 20.0
max_settling_time = 2.5
min_phase_margin_deg = 40.0

[search]
structures = ["P", "lead", "PD"]
effort = 0.3
seed = 11
keep = 8
"""


def _design(path, out):
    return subprocess.Popen([sys.executable, "-m", "synth.cli", "design", str(path), "--json",
                             str(out)], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _without_timing(path) -> str:
    doc = json.loads(path.read_text())
    for key in TIMING_FIELDS:
        doc["search"].pop(key)
    return json.dumps(doc, sort_keys=True)


#: The same loop run by a sampled controller (the sampled-data verifier and the search's
#: hold model: no clock either).
SAMPLED = CASE + "\n[sampling]\nperiod = 0.05\ncompute_delay = 0.02\n"


@pytest.mark.parametrize("text", [CASE, SAMPLED], ids=["continuous", "sampled"])
def test_four_designs_run_at_once_give_identical_json(tmp_path, text):
    case = tmp_path / "lead.toml"
    case.write_text(text)
    outs = [tmp_path / f"run{i}.json" for i in range(4)]
    procs = [_design(case, out) for out in outs]
    codes = [p.wait(timeout=600) for p in procs]
    for p in procs:
        p.stdout.close()
        p.stderr.close()
    assert codes == [0, 0, 0, 0]
    alone = tmp_path / "alone.json"
    single = _design(case, alone)
    out, err = single.communicate(timeout=600)
    assert single.returncode == 0, err
    docs = [_without_timing(p) for p in [*outs, alone]]
    assert all(d == docs[0] for d in docs[1:])
    doc = json.loads(docs[0])
    assert doc["search"]["time_capped"] == [] and doc["designs"]
