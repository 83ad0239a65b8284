"""make demo's script (examples/run-demo.sh) end to end: its printed summary of
the reference -> new batch story is counted from the files it wrote, and agrees
with the planted faults (examples/moulding_new_batch_faults.csv, the invented
ground truth) and with the scored rows counted here."""
import os
import re
import subprocess
import sys

sys.path.insert(0, os.path.dirname(__file__))
from e2e_util import BIN, EXAMPLES, Checks, read_csv, scratch  # noqa: E402

check = Checks()
out = scratch()
env = dict(os.environ, ELLIPSA_BIN=BIN, ELLIPSA_DEMO_OUT=out)
p = subprocess.run(["bash", os.path.join(EXAMPLES, "run-demo.sh")], env=env, capture_output=True, text=True,
                   timeout=600)
check(p.returncode == 0, f"run-demo.sh exit {p.returncode}: {p.stderr[-2000:]}")
m = re.search(r"Summary: planted faults flagged (\d+) of (\d+); clean shots flagged (\d+) of (\d+) "
              r"\(chance alone at level 0.975: about ([\d.]+), and more than (\d+) in fewer than 1% of batches",
              p.stdout)
check(m is not None, "the demo prints its summary line")
if m:
    found, planted, clean_flagged, clean, expected, bound = (float(g) for g in m.groups())
    faults = {r["shot_id"] for r in read_csv(os.path.join(EXAMPLES, "moulding_new_batch_faults.csv"))
              if r["shot_id"].startswith("A-")}
    scored = read_csv(os.path.join(out, "new_batch_A_scored.csv"))
    check(planted == len(faults) == 3, f"3 planted faults in mould A (printed {planted})")
    check(found == sum(r["flag"] == "1" for r in scored if r["shot_id"] in faults), "faults flagged as counted here")
    check(clean == len(scored) - len(faults) == 117, f"117 clean shots (printed {clean})")
    check(clean_flagged == sum(r["flag"] == "1" for r in scored if r["shot_id"] not in faults),
          "clean shots flagged as counted here")
    # 117 * 0.025 = 2.925; the 99% quantile of Binomial(117, 0.025) is 7
    # (R: qbinom(0.99, 117, 0.025), run here).
    check(abs(expected - 2.9) < 1e-9, f"expected by chance {expected}")
    check(bound == 7, f"99% binomial bound {bound}")
    # The default fit flags every planted fault (docs/calibration.md: 100 of
    # 100 regenerated processes) and at most 8 clean shots (the 99.7% quantile).
    check(found == 3 and clean_flagged <= 8, f"faults {found}, clean flags {clean_flagged}")

check.finish()
