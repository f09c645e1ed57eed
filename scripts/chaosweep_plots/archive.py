"""Reads a chaosweep archive into plain numpy arrays (h5py), one attribute per dataset used.

Groups that an archive does not hold (no sweep, no regimes, no histogram, no stored
trajectories, and the snapshot / twin / Lyapunov / horizon datasets) read as None, so each
figure can decide for itself whether it applies.
"""
import h5py
import numpy as np


def _text(value):
    return value.decode() if isinstance(value, bytes) else str(value)


def _names(dataset):
    return [_text(v) for v in dataset[()]]


def _get(f, path):
    return f[path][()] if path in f else None


class Archive:
    def __init__(self, path):
        self.path = path
        with h5py.File(path, "r") as f:
            attrs = f.attrs
            self.campaign = _text(attrs.get("campaign", attrs.get("title", path)))
            self.description = _text(attrs.get("description", ""))
            self.model = _text(attrs.get("model", ""))
            self.status = _text(attrs.get("status", "unknown"))
            self.spec_yaml = _text(attrs.get("spec_yaml", ""))
            self.tool_version = _text(attrs.get("tool_version", ""))
            self.created_utc = _text(attrs.get("created_utc", ""))
            self.ranks = int(attrs.get("ranks", 0))
            self.spinup = float(attrs.get("spinup", np.nan))
            self.duration = float(attrs.get("duration", np.nan))
            # A parameter that follows a schedule: its sweep values are offsets added to it.
            self.scheduled = _text(attrs.get("scheduled_parameter", ""))
            self.observables = _names(f["observable"])

            # Swept axes in spec order (the order of /response/axis), each a value per case.
            self.axes = _names(f["response/axis"]) if "response/axis" in f else []
            self.axis_values = {a: f["case/" + a][()].astype(float) for a in self.axes}
            self.cases = int(f["case/case"].shape[0])

            self.status_member = f["member/status"][()]
            self.members = int(self.status_member.shape[1])
            self.valid = f["ensemble/valid_members"][()].astype(int)
            self.member_mean = f["member/time_mean"][()]
            self.mean = f["ensemble/time_mean"][()]
            self.mean_ci = f["ensemble/time_mean_ci95"][()]
            self.slope = _get(f, "response/slope")
            self.slope_stderr = _get(f, "response/slope_stderr")
            self.fit_pvalue = _get(f, "response/linear_fit_pvalue")   # axis, observable
            self.fit_chi2 = _get(f, "response/linear_fit_chi2")       # axis, observable
            self.fit_dof = _get(f, "response/linear_fit_dof")         # axis, observable
            self.local_slope = _get(f, "response/local_slope")  # axis, case, observable
            self.local_slope_stderr = _get(f, "response/local_slope_stderr")  # axis, case, observable
            self.predicted = _get(f, "response/predicted_slope")  # forcing_parameter, case, observable
            self.predicted_stderr = _get(f, "response/predicted_slope_stderr")
            self.forcings = (_names(f["response/forcing_parameter"])
                             if "response/forcing_parameter" in f else [])

            self.regimes = _names(f["ensemble/regime"]) if "ensemble/regime" in f else []
            self.regime = _get(f, "ensemble/regime_fraction")
            self.regime_ci = _get(f, "ensemble/regime_fraction_ci95")
            self.member_regime = _get(f, "member/regime_fraction")
            self.residence = _get(f, "ensemble/regime_mean_residence")
            self.residence_ci = _get(f, "ensemble/regime_mean_residence_ci95")
            self.member_residence = _get(f, "member/regime_mean_residence")

            self.hist_counts = _get(f, "histogram/counts")
            self.hist_edges = _get(f, "histogram/edges")
            self.hist_observable = None
            if "histogram/bin" in f:
                long_name = _text(f["histogram/bin"].attrs.get("long_name", ""))
                prefix = "bin centre of "
                if long_name.startswith(prefix):
                    self.hist_observable = long_name[len(prefix):]

            self.traj_time = _get(f, "trajectory/time")
            self.traj_state = _get(f, "trajectory/state")
            self.traj_variables = (_names(f["trajectory/variable"])
                                   if "trajectory/variable" in f else [])

            # Datasets of optional features (the schema, `chaosweep schema`); None when absent.
            self.snap_time = _get(f, "snapshot/time")
            self.transient = _get(f, "transient/response")          # case, time, observable
            self.transient_ci = _get(f, "transient/response_ci95")  # case, time, observable, bound
            self.transient_ref_std = _get(f, "transient/reference_std")   # time, observable
            self.emergence = _get(f, "transient/emergence_time")    # case, observable
            self.paired_with = (int(f.attrs["paired_with_case"])
                                if "paired_with_case" in f.attrs else None)
            self.snap_mean = _get(f, "snapshot/mean")          # case, time, observable
            self.snap_variance = _get(f, "snapshot/variance")  # case, time, observable
            self.snap_regime = _get(f, "snapshot/regime_fraction")  # case, time, regime
            self.snap_observables = (_names(f["snapshot/observable"])
                                     if "snapshot/observable" in f else self.observables)
            self.snap_regimes = (_names(f["snapshot/regime"])
                                 if "snapshot/regime" in f else self.regimes)
            self.twin_lead = _get(f, "twins/lead")
            self.twin_log_sep = _get(f, "twins/log_separation")  # case, lead
            self.twin_growth_rate = _get(f, "twins/growth_rate")      # case
            self.twin_growth_window = _get(f, "twins/growth_window")  # case, window_edge
            self.lyapunov = _get(f, "member/lyapunov")           # case, member, exponent
            self.horizon = _get(f, "member/horizon")             # case, member
            self.twin_unseparated = _get(f, "twins/unseparated_fraction")  # case, lead
            self.horizon_median = _get(f, "twins/horizon_median")            # case
            self.horizon_median_ci = _get(f, "twins/horizon_median_ci95")    # case, bound
            self.non_chaotic = _get(f, "ensemble/non_chaotic")               # case

    # --- helpers shared by the figures and the report -------------------------------------

    @property
    def valid_mask(self):
        """(case, member) True for members that enter the estimates."""
        return self.status_member == 0

    def valid_text(self):
        """'valid members: 5630 of 5632 (510-512 per case)'."""
        total = self.cases * self.members
        lo, hi = int(self.valid.min()), int(self.valid.max())
        per_case = f"{lo} per case" if lo == hi else f"{lo}-{hi} per case"
        return f"valid members: {int(self.valid.sum())} of {total} ({per_case})"

    def axis_name(self, axis):
        """An axis as it reads on a figure: a scheduled parameter's sweep is an offset."""
        return f"{axis} offset" if axis == self.scheduled else axis

    def case_label(self, c):
        if not self.axes:
            return f"case {c}"
        return ", ".join(f"{self.axis_name(a)} = {self.axis_values[a][c]:g}" for a in self.axes)

    def few_cases(self, n=3):
        """Up to n cases spread over the sweep: first, last and evenly between."""
        picks = np.linspace(0, self.cases - 1, min(n, self.cases)).round().astype(int)
        return sorted(set(picks.tolist()))
