"""Per-member extremes (/member/extreme_min, _max, _min_time, _max_time) against an
independent re-integration in numpy.

Usage: check_extremes.py CHAOSWEEP WORKDIR LAUNCHER... (e.g. mpiexec -n 2 --oversubscribe)

Runs a small forced Lorenz-63 campaign under LAUNCHER, then integrates every member again from its
archived /member/initial_state with classical RK4 written here in numpy (the forced Lorenz-63
equations, Lorenz 1963, J. Atmos. Sci. 20, 130, plus the constant tendency f d), takes the
minimum and maximum of each observable over the samples of the time mean (the states after
steps spinup+1 .. spinup+duration, as /member/time_mean uses) with numpy's argmin/argmax (the
first index among equal values), and compares. Tolerance: the two integrations differ only in
the order of floating-point operations (about 1e-15 per step), grown by the flow over 1.5 model
time units (leading exponent about 0.9, from memory): 1e-9 relative is ample and still fails on
any wrong sample, step or time.
"""
import os
import subprocess
import sys

import h5py
import numpy as np

prog, work, launcher = sys.argv[1], sys.argv[2], sys.argv[3:]
os.makedirs(work, exist_ok=True)
SIGMA, RHO, BETA = 10.0, 28.0, 8.0 / 3.0
DIRECTION = np.array([0.6, 0.8, 0.0])
DT, SPINUP, DURATION = 0.01, 0.5, 1.0
spec = os.path.join(work, "extremes.yaml")
archive = os.path.join(work, "extremes.h5")
with open(spec, "w") as f:
    f.write(f"""campaign: {{name: extremes-check, description: extremes against numpy}}
model:
  name: lorenz63
  parameters: {{forcing_direction: [0.6, 0.8, 0]}}
sweep:
  - {{parameter: forcing, values: [0, 4]}}
ensemble:
  members: 24
  initial_state: {{from: attractor, spinup: 5}}
  perturbation: {{distribution: gaussian, scale: 1.0}}
  seed: 11
integration: {{method: rk4, dt: {DT}, spinup: {SPINUP}, duration: {DURATION}}}
output: {{archive: extremes.h5}}
run: {{batch_size: 8}}
""")
subprocess.run(launcher + [prog, "run", spec, "--archive", archive, "--overwrite", "--progress",
                            "none"], check=True)


def rhs(s, forcing):
    x, y, z = s[..., 0], s[..., 1], s[..., 2]
    t = forcing * DIRECTION
    return np.stack([SIGMA * (y - x) + t[0], x * (RHO - z) - y + t[1], x * y - BETA * z + t[2]],
                    axis=-1)


spinup_steps, steps = round(SPINUP / DT), round(DURATION / DT)
failures = []
with h5py.File(archive, "r") as f:
    names = [n.decode() if isinstance(n, bytes) else n for n in f["observable"][()]]
    assert names == ["x", "y", "z"], names
    forcing = f["case/forcing"][()]
    start = f["member/initial_state"][()]          # case, member, state
    status = f["member/status"][()]
    got = {k: f["member/extreme_" + k][()] for k in ("min", "max", "min_time", "max_time")}
    if f["member/extreme_min_time"].attrs["units"] != "model_time_unit":
        failures.append("extreme_min_time has the wrong units")
for c, fc in enumerate(forcing):
    s = start[c].copy()
    samples = []
    for k in range(1, spinup_steps + steps + 1):
        k1 = rhs(s, fc)
        k2 = rhs(s + 0.5 * DT * k1, fc)
        k3 = rhs(s + 0.5 * DT * k2, fc)
        k4 = rhs(s + DT * k3, fc)
        s = s + DT / 6.0 * (k1 + 2.0 * k2 + 2.0 * k3 + k4)
        if k > spinup_steps:
            samples.append(s.copy())
    series = np.array(samples)                      # sample, member, observable
    sample_step = np.arange(spinup_steps + 1, spinup_steps + steps + 1)
    for name, pick, values in (("min", np.argmin, got["min"]), ("max", np.argmax, got["max"])):
        at = pick(series, axis=0)                   # member, observable
        want = np.take_along_axis(series, at[None], axis=0)[0]
        ok = status[c] == 0
        if not ok.all():
            failures.append(f"case {c}: members unexpectedly invalid")
        if not np.allclose(values[c], want, rtol=1e-9, atol=1e-9):
            failures.append(f"case {c}: extreme_{name} differs from numpy by "
                            f"{np.max(np.abs(values[c] - want)):.3g}")
        times = got[name + "_time"][c]
        # the archived time must be a sample's time (step * dt), and that sample must hold the
        # extreme (an exact tie within the tolerance may resolve either way)
        index = np.rint(times / DT).astype(int) - (spinup_steps + 1)
        if np.any(index < 0) or np.any(index >= steps) or \
                not np.array_equal(times, sample_step[np.clip(index, 0, steps - 1)] * DT):
            failures.append(f"case {c}: extreme_{name}_time is not the time of a sample")
            continue
        held = np.take_along_axis(series, index[None], axis=0)[0]
        if not np.allclose(held, want, rtol=1e-9, atol=1e-9):
            failures.append(f"case {c}: extreme_{name}_time points at a sample that is not the "
                            f"extreme")
        if np.mean(index == at) < 0.95:
            failures.append(f"case {c}: extreme_{name}_time agrees with numpy's first index "
                            f"for only {np.mean(index == at):.0%} of the series")
for line in failures:
    print("FAIL:", line)
if failures:
    sys.exit(1)
print(f"extremes of {start.shape[0]} x {start.shape[1]} members x 3 observables agree with a "
      f"numpy re-integration")
