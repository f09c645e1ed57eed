"""The figures of a campaign. Each `fig_*` function returns a list of Figure (written PNGs) or
of Skip (a figure that does not apply to this archive, with the reason); none raises for data
that is merely absent.

Every figure is FIG_PIXELS (width, height) pixels, titled with the campaign's name and its
number of valid members, with labelled axes and units (all models are nondimensional: model
units, time in model time units).
"""
import os
from collections import namedtuple

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.lines import Line2D  # noqa: E402
from matplotlib.patches import Patch  # noqa: E402

FIG_INCHES = (12.0, 7.5)
DPI = 100
FIG_PIXELS = (int(FIG_INCHES[0] * DPI), int(FIG_INCHES[1] * DPI))
PANELS_PER_PAGE = 6
MAX_GROUPS = 6          # lines per panel when a second axis splits the cases

Figure = namedtuple("Figure", "name path title caption")
Skip = namedtuple("Skip", "name reason")

plt.rcParams.update({"font.size": 11, "axes.titlesize": 11, "figure.titlesize": 13,
                     "legend.fontsize": 9, "legend.framealpha": 0.85})


# --- shared drawing helpers -----------------------------------------------------------------

def _grid(n):
    """Rows and columns for n panels (n <= PANELS_PER_PAGE)."""
    return {1: (1, 1), 2: (1, 2), 3: (1, 3), 4: (2, 2)}.get(n, (2, 3))


def _new_figure(arch, what):
    fig = plt.figure(figsize=FIG_INCHES, dpi=DPI, layout="constrained")
    title = f"{arch.campaign}: {what}\n{arch.valid_text()}"
    fig.suptitle(title)
    return fig, title.replace("\n", " - ")


def _save(fig, outdir, name, title, caption):
    path = os.path.join(outdir, name + ".png")
    fig.savefig(path, dpi=DPI, metadata={"Title": title, "Description": caption})
    plt.close(fig)
    return Figure(name, path, title, caption)


def _pages(items):
    return [items[i:i + PANELS_PER_PAGE] for i in range(0, len(items), PANELS_PER_PAGE)]


def _page_name(base, page, pages):
    return base if pages == 1 else f"{base}-{page + 1}"


def _hide_unused(axes, used):
    for ax in axes.flat[used:]:
        ax.set_visible(False)


def _groups(arch, axis):
    """Cases split by the values of the other swept axes: [(label or None, cases sorted by
    the value of `axis`)], at most MAX_GROUPS of them (evenly spread), and the total count."""
    others = [a for a in arch.axes if a != axis]
    keys = {}
    for c in range(arch.cases):
        key = tuple(arch.axis_values[b][c] for b in others)
        keys.setdefault(key, []).append(c)
    ordered = sorted(keys)
    total = len(ordered)
    if total > MAX_GROUPS:
        ordered = [ordered[i] for i in np.linspace(0, total - 1, MAX_GROUPS).round().astype(int)]
    x = arch.axis_values[axis]
    groups = []
    for key in ordered:
        cases = sorted(keys[key], key=lambda c: x[c])
        label = ", ".join(f"{b} = {v:g}" for b, v in zip(others, key)) if others else None
        groups.append((label, np.array(cases)))
    return groups, total


def _colors(n):
    cmap = plt.get_cmap("tab10")
    return [cmap(i % 10) for i in range(n)]


def _jitter(arch, axis):
    """Small horizontal offsets for member points so that they do not sit on one line."""
    values = np.unique(arch.axis_values[axis])
    spacing = np.min(np.diff(values)) if values.size > 1 else 1.0
    rng = np.random.default_rng(0)
    return rng.uniform(-0.12, 0.12, size=(arch.cases, arch.members)) * spacing


def _band(ax, x, mean, lo, hi, color, label=None):
    ax.fill_between(x, lo, hi, color=color, alpha=0.3, linewidth=0)
    ax.errorbar(x, mean, yerr=[mean - lo, hi - mean], color=color, marker="o", markersize=4,
                capsize=3, linewidth=1.5, label=label)


def _members(ax, x, values, mask, jitter, color):
    """Members as faint points: values and mask are (case, member) for the cases at x."""
    xs = (x[:, None] + jitter)[mask]
    ys = values[mask]
    ok = np.isfinite(ys)
    # Fainter as the ensemble grows, so that the cloud stays readable behind the band.
    alpha = float(np.clip(3.0 / np.sqrt(max(values.shape[1], 1)), 0.08, 0.5))
    ax.scatter(xs[ok], ys[ok], s=6, color=color, alpha=alpha, linewidths=0, rasterized=True)


def _t975(dof):
    """0.975 quantile of Student's t with dof degrees of freedom."""
    from scipy.stats import t
    return float(t.ppf(0.975, dof))


def _member_estimate(values, mask):
    """Mean and 95% interval (Student t) across members of a (case, member) array, over valid
    members with finite values; also the count used per case."""
    cases = values.shape[0]
    mean, lo, hi = (np.full(cases, np.nan) for _ in range(3))
    count = np.zeros(cases, dtype=int)
    for c in range(cases):
        v = values[c][mask[c] & np.isfinite(values[c])]
        count[c] = v.size
        if v.size == 0:
            continue
        mean[c] = v.mean()
        if v.size > 1:
            half = _t975(v.size - 1) * v.std(ddof=1) / np.sqrt(v.size)
            lo[c], hi[c] = mean[c] - half, mean[c] + half
        else:
            lo[c] = hi[c] = mean[c]
    return mean, lo, hi, count


def _fitted(arch, o, axis, cases):
    """The least-squares plane of /response/slope evaluated at `cases`: it passes through the
    centroid of the cases with a finite ensemble mean, so y = ybar + sum_b s_b (x_b - xbar_b)."""
    y = arch.mean[:, o]
    used = np.isfinite(y)
    if arch.slope is None or not used.any():
        return None
    fit = np.full(len(cases), y[used].mean())
    for b, name in enumerate(arch.axes):
        s = arch.slope[b, o]
        xb = arch.axis_values[name]
        if np.isfinite(s):
            fit += s * (xb[cases] - xb[used].mean())
        elif name == axis:
            return None
    return fit


def _per_member_vs_axis(arch, axis, ax, values, mask, colors):
    """Mean and 95% band of a per-member quantity against `axis`, members as faint points, a
    line per group of the other axes. Returns the legend handles."""
    mean, lo, hi, _ = _member_estimate(values, mask)
    groups, _ = _groups(arch, axis)
    jitter = _jitter(arch, axis)
    x = arch.axis_values[axis]
    handles = []
    for (label, cases), color in zip(groups, colors):
        _members(ax, x[cases], values[cases], mask[cases], jitter[cases], color)
        _band(ax, x[cases], mean[cases], lo[cases], hi[cases], color)
        if label:
            handles.append(Line2D([], [], color=color, marker="o", label=label))
    return handles


def _standard_handles(fit=True):
    handles = [Line2D([], [], color="grey", marker="o", linestyle="", alpha=0.5, markersize=3,
                      label="members"),
               Patch(color="grey", alpha=0.3, label="ensemble mean, 95% interval")]
    if fit:
        handles.append(Line2D([], [], color="black", linestyle="--", label="least-squares fit"))
    return handles


# --- forced response ------------------------------------------------------------------------

def fig_response(arch, outdir):
    if not arch.axes:
        return [Skip("response", "the campaign has no swept parameter")]
    out = []
    obs_pages = _pages(list(range(len(arch.observables))))
    mask = arch.valid_mask
    for axis in arch.axes:
        a = arch.axes.index(axis)
        groups, total = _groups(arch, axis)
        colors = _colors(len(groups)) if len(groups) > 1 else ["tab:blue"]
        jitter = _jitter(arch, axis)
        x = arch.axis_values[axis]
        for page, obs in enumerate(obs_pages):
            fig, title = _new_figure(arch, f"forced response of the time means to {axis}")
            axes = fig.subplots(*_grid(len(obs)), squeeze=False)
            for ax, o in zip(axes.flat, obs):
                name = arch.observables[o]
                for (label, cases), color in zip(groups, colors):
                    _members(ax, x[cases], arch.member_mean[cases, :, o], mask[cases],
                             jitter[cases], color)
                    ci = arch.mean_ci[cases, o]
                    _band(ax, x[cases], arch.mean[cases, o], ci[:, 0], ci[:, 1], color, label)
                    fit = _fitted(arch, o, axis, cases)
                    if fit is not None:
                        ax.plot(x[cases], fit, "--", color="black" if len(groups) == 1 else color,
                                linewidth=1.2)
                slope = ""
                if arch.slope is not None and np.isfinite(arch.slope[a, o]):
                    slope = (f"\nslope {arch.slope[a, o]:.3g} \u00b1 "
                             f"{arch.slope_stderr[a, o]:.2g} per unit {axis}")
                ax.set_title(f"<{name}>{slope}")
                ax.set_xlabel(f"{arch.axis_name(axis)} (model units)")
                ax.set_ylabel(f"time mean of {name} (model units)")
                ax.grid(alpha=0.3)
            _hide_unused(axes, len(obs))
            handles = _standard_handles()
            if len(groups) > 1:
                handles += [Line2D([], [], color=c, marker="o", label=lab)
                            for (lab, _), c in zip(groups, colors)]
            axes.flat[0].legend(handles=handles, loc="best")
            more = f" Lines for {len(groups)} of {total} values of the other axes." \
                if total > len(groups) else ""
            caption = (f"Ensemble mean of each member's time mean against {axis}, with the 95% "
                       f"confidence interval of the mean (band and bars); faint points are the "
                       f"individual members (valid only); dashed: the least-squares response "
                       f"fitted over all cases (slope \u00b1 standard error in each title).{more}")
            out.append(_save(fig, outdir, _page_name(f"response-{axis}", page, len(obs_pages)),
                             title, caption))
    return out


def fig_local_slope(arch, outdir):
    """The local slope of each time mean along each axis, against that axis, beside the one
    least-squares slope: where they part, one slope does not describe the response."""
    if not arch.axes or arch.local_slope is None:
        return [Skip("local-slope", "the campaign has no swept parameter")]
    out = []
    obs_pages = _pages(list(range(len(arch.observables))))
    for axis in arch.axes:
        a = arch.axes.index(axis)
        groups, total = _groups(arch, axis)
        colors = _colors(len(groups)) if len(groups) > 1 else ["tab:blue"]
        x = arch.axis_values[axis]
        for page, obs in enumerate(obs_pages):
            fig, title = _new_figure(arch, f"local response of the time means to {axis}")
            axes = fig.subplots(*_grid(len(obs)), squeeze=False)
            for ax, o in zip(axes.flat, obs):
                name = arch.observables[o]
                for (label, cases), color in zip(groups, colors):
                    d = arch.local_slope[a, cases, o]
                    half = 1.96 * arch.local_slope_stderr[a, cases, o]
                    ax.errorbar(x[cases], d, yerr=half, color=color, marker="o", capsize=3,
                                label=label)
                s, se = arch.slope[a, o], arch.slope_stderr[a, o]
                if np.isfinite(s):
                    ax.axhline(s, color="black", linestyle="--", linewidth=1.2)
                    ax.axhspan(s - 1.96 * se, s + 1.96 * se, color="black", alpha=0.08)
                fit = ""
                if arch.fit_pvalue is not None and np.isfinite(arch.fit_pvalue[a, o]):
                    fit = (f"\nlinear fit: chi2/dof {arch.fit_chi2[a, o]:.3g}/"
                           f"{int(arch.fit_dof[a, o])}, p {arch.fit_pvalue[a, o]:.2g}")
                ax.set_title(f"d<{name}>/d{axis}{fit}")
                ax.set_xlabel(f"{arch.axis_name(axis)} (model units)")
                ax.set_ylabel(f"local slope of <{name}> (per unit {axis})")
                ax.grid(alpha=0.3)
            _hide_unused(axes, len(obs))
            handles = [Line2D([], [], color="tab:blue" if len(groups) == 1 else "gray",
                              marker="o", label="local slope, 95% interval"),
                       Line2D([], [], color="black", linestyle="--",
                              label="least-squares slope over all cases")]
            if len(groups) > 1:
                handles += [Line2D([], [], color=c, marker="o", label=lab)
                            for (lab, _), c in zip(groups, colors)]
            axes.flat[0].legend(handles=handles, loc="best")
            more = f" Lines for {len(groups)} of {total} values of the other axes." \
                if total > len(groups) else ""
            caption = (f"Derivative of each ensemble time mean along {axis} at every case, the "
                       f"other parameters fixed (central differences between neighbouring "
                       f"cases, one-sided at the ends), with 95% intervals from the cases' "
                       f"standard errors; dashed with its band: the one least-squares slope. "
                       f"The title gives the chi-square of the best linear fit: a small p means "
                       f"one slope does not describe the response.{more}")
            out.append(_save(fig, outdir, _page_name(f"local-slope-{axis}", page,
                                                      len(obs_pages)), title, caption))
    return out


def fig_predicted(arch, outdir):
    """For each additive forcing that is also swept: the response of each time mean predicted
    from every case's own fluctuations against the forcing, beside the direct local slope."""
    if arch.predicted is None:
        return [Skip("predicted", "the archive has no predicted response (statistics.response)")]
    swept = [p for p in arch.forcings if p in arch.axes]
    if not swept or arch.local_slope is None:
        return [Skip("predicted", "no additive forcing of the model is swept, so there is no "
                     "direct slope to set the prediction beside (the summary lists it)")]
    out = []
    obs_pages = _pages(list(range(len(arch.observables))))
    for forcing in swept:
        p, a = arch.forcings.index(forcing), arch.axes.index(forcing)
        groups, total = _groups(arch, forcing)
        x = arch.axis_values[forcing]
        for page, obs in enumerate(obs_pages):
            fig, title = _new_figure(arch, f"response to {forcing}: predicted and direct")
            axes = fig.subplots(*_grid(len(obs)), squeeze=False)
            for ax, o in zip(axes.flat, obs):
                name = arch.observables[o]
                for g, (label, cases) in enumerate(groups):
                    suffix = f" ({label})" if len(groups) > 1 else ""
                    ax.errorbar(x[cases], arch.local_slope[a, cases, o],
                                yerr=1.96 * arch.local_slope_stderr[a, cases, o],
                                color="tab:blue", marker="o", capsize=3,
                                alpha=1.0 if g == 0 else 0.5,
                                label="direct (local slope)" + suffix if g == 0 else None)
                    ax.errorbar(x[cases], arch.predicted[p, cases, o],
                                yerr=1.96 * arch.predicted_stderr[p, cases, o],
                                color="tab:red", marker="s", capsize=3, linestyle="--",
                                alpha=1.0 if g == 0 else 0.5,
                                label="predicted from fluctuations" + suffix if g == 0 else None)
                ax.axhline(0.0, color="black", linewidth=0.6)
                ax.set_title(f"d<{name}>/d{forcing}")
                ax.set_xlabel(f"{arch.axis_name(forcing)} (model units)")
                ax.set_ylabel(f"slope of <{name}> (per unit {forcing})")
                ax.grid(alpha=0.3)
            _hide_unused(axes, len(obs))
            axes.flat[0].legend(loc="best")
            more = f" Lines for {len(groups)} of {total} values of the other axes." \
                if total > len(groups) else ""
            caption = (f"Blue: the derivative of each ensemble time mean along {forcing} from "
                       f"neighbouring cases (central differences), with 95% intervals. Red: the "
                       f"same derivative predicted from each case's own fluctuations by the "
                       f"quasi-Gaussian fluctuation-dissipation relation (lagged covariances "
                       f"of the observable with the state, times the inverse state covariance, "
                       f"integrated over lag), with 95% intervals from a jackknife over groups "
                       f"of members. Where they part, the model's statistics are too far from "
                       f"Gaussian for the relation.{more}")
            out.append(_save(fig, outdir, _page_name(f"predicted-{forcing}", page,
                                                      len(obs_pages)), title, caption))
    return out


# --- regime fractions -----------------------------------------------------------------------

def _per_regime(arch, outdir, stem, values, ci, members, what, panel_title, ylabel, caption,
                logy=False):
    """A figure per swept axis of a per-regime ensemble estimate (values and ci [case][regime],
    members [case][member][regime]) against the axis: one panel with a line per regime, or with
    more axes a panel per regime and a line per group of the other axes. Skipped without
    regimes or without a sweep."""
    if values is None:
        return [Skip(stem, "the campaign defines no regimes (statistics.regimes)")]
    if not arch.axes:
        return [Skip(stem, "the campaign has no swept parameter")]
    out = []
    mask = arch.valid_mask
    for axis in arch.axes:
        groups, total = _groups(arch, axis)
        x = arch.axis_values[axis]
        jitter = _jitter(arch, axis)
        fig, title = _new_figure(arch, f"{what} against {axis}")
        if len(groups) == 1:
            # One panel: a line per regime.
            ax = fig.subplots()
            cases = groups[0][1]
            colors = _colors(len(arch.regimes))
            for k, (label, color) in enumerate(zip(arch.regimes, colors)):
                if members is not None:
                    _members(ax, x[cases], members[cases, :, k], mask[cases], jitter[cases], color)
                band = ci[cases, k]
                _band(ax, x[cases], values[cases, k], band[:, 0], band[:, 1], color, label)
            panels = [ax]
            ax.legend(handles=_standard_handles(fit=False) + [
                Line2D([], [], color=c, marker="o", label=f"regime {lab}")
                for lab, c in zip(arch.regimes, colors)], loc="best")
            ax.set_title(panel_title)
        else:
            # A panel per regime: a line per group of the other axes.
            regs = arch.regimes[:PANELS_PER_PAGE]
            axes = fig.subplots(*_grid(len(regs)), squeeze=False, sharey=logy)
            colors = _colors(len(groups))
            for ax, k in zip(axes.flat, range(len(regs))):
                for (label, cases), color in zip(groups, colors):
                    if members is not None:
                        _members(ax, x[cases], members[cases, :, k], mask[cases], jitter[cases],
                                 color)
                    band = ci[cases, k]
                    _band(ax, x[cases], values[cases, k], band[:, 0], band[:, 1], color, label)
                ax.set_title(f"regime {regs[k]}")
            _hide_unused(axes, len(regs))
            panels = list(axes.flat[:len(regs)])
            panels[0].legend(handles=_standard_handles(fit=False) + [
                Line2D([], [], color=c, marker="o", label=lab)
                for (lab, _), c in zip(groups, colors)], loc="best")
        for ax in panels:
            ax.set_xlabel(f"{arch.axis_name(axis)} (model units)")
            ax.set_ylabel(ylabel)
            if logy:
                ax.set_yscale("log")
            ax.grid(alpha=0.3)
        out.append(_save(fig, outdir, f"{stem}-{axis}", title, caption(axis)))
    return out


def fig_regimes(arch, outdir):
    return _per_regime(
        arch, outdir, "regimes", arch.regime, arch.regime_ci, arch.member_regime,
        "regime fractions", "share of time in each regime",
        "share of time in the regime (fraction, 0-1)",
        lambda axis: (f"Ensemble-mean share of time spent in each regime against {axis}, with "
                      f"the 95% confidence interval of the mean; faint points are the "
                      f"individual members."))


def fig_residence(arch, outdir):
    return _per_regime(
        arch, outdir, "residence", arch.residence, arch.residence_ci, arch.member_residence,
        "mean residence time", "mean length of a stay in each regime",
        "mean residence time (model time units, log scale)",
        lambda axis: (f"Ensemble mean of the members' mean residence time (the mean length of "
                      f"an uninterrupted stay) in each regime against {axis}, with the 95% "
                      f"confidence interval of the mean, over the members that visited the "
                      f"regime; faint points are the individual members. Stays cut by the "
                      f"end of the window count as they are, so residence times comparable "
                      f"to the window are underestimated."),
        logy=True)


# --- histogram ------------------------------------------------------------------------------

def fig_histogram(arch, outdir):
    if arch.hist_counts is None:
        return [Skip("histogram", "the campaign has no histogram (statistics.histogram)")]
    name = arch.hist_observable or "the histogram observable"
    edges = arch.hist_edges
    width = np.diff(edges)
    fig, title = _new_figure(arch, f"distribution of {name}")
    ax = fig.subplots()
    cases = arch.few_cases(4)
    for c, color in zip(cases, _colors(len(cases))):
        counts = arch.hist_counts[c].astype(float)
        if counts.sum() == 0:
            continue
        density = counts / (counts.sum() * width)
        ax.stairs(density, edges, color=color, linewidth=1.8,
                  label=f"{arch.case_label(c)} ({arch.valid[c]} valid members)")
    # Show the part of the range that holds samples, with a bin to spare on either side.
    filled = np.nonzero(arch.hist_counts[cases].sum(axis=0))[0]
    if filled.size:
        ax.set_xlim(edges[max(filled[0] - 1, 0)], edges[min(filled[-1] + 2, len(edges) - 1)])
    ax.set_xlabel(f"{name} (model units)")
    ax.set_ylabel("probability density (per model unit)")
    ax.set_ylim(bottom=0)
    ax.grid(alpha=0.3)
    ax.legend(loc="best")
    ax.set_title(f"every accumulated step of every valid member, {len(width)} bins")
    caption = (f"Distribution of {name} over the accumulation window, pooled over the valid "
               f"members of each case, for {len(cases)} cases spread over the sweep; normalised "
               f"to unit area over the histogram's range.")
    return [_save(fig, outdir, "histogram", title, caption)]


# --- sample trajectories --------------------------------------------------------------------

def _trajectory_variable(arch):
    """The first observable that is a state variable (so it is in the stored trajectories)."""
    for name in arch.observables:
        if name in arch.traj_variables:
            return name
    return arch.traj_variables[0]


def fig_trajectories(arch, outdir, window):
    if arch.traj_state is None:
        return [Skip("trajectories", "the archive stores no trajectories (output.trajectories)")]
    if arch.cases < 2:
        return [Skip("trajectories", "trajectories are compared across two or more cases; "
                                     "the campaign has one")]
    var = _trajectory_variable(arch)
    v = arch.traj_variables.index(var)
    t = arch.traj_time
    shown = t <= t[0] + window
    samples = arch.traj_state.shape[1]
    cases = arch.few_cases(3)
    fig, title = _new_figure(arch, "sample trajectories of stored members")
    grid = fig.add_gridspec(len(cases), 2 if samples > 1 else 1,
                            width_ratios=[3, 2] if samples > 1 else [1])
    first = None
    styles = ["-", "--", ":", "-."]
    for row, c in enumerate(cases):
        ax = fig.add_subplot(grid[row, 0], sharex=first)
        first = first or ax
        for s in range(samples):
            ax.plot(t[shown], arch.traj_state[c, s, shown, v], styles[s % 4],
                    linewidth=1.0, label=f"member {s}")
        ax.set_ylabel(f"{var} (model units)")
        ax.set_title(arch.case_label(c), loc="left")
        ax.grid(alpha=0.3)
        marked = np.isfinite(arch.spinup) and arch.spinup < t[shown][-1]
        if marked:
            ax.axvline(t[0] + arch.spinup, color="grey", linestyle=":", linewidth=1,
                       label="end of spin-up")
        if row == 0:
            ax.legend(loc="lower right", bbox_to_anchor=(1.0, 1.0), ncols=samples + marked,
                      frameon=False, borderaxespad=0.1)
        if row < len(cases) - 1:
            ax.tick_params(labelbottom=False)
        else:
            ax.set_xlabel("model time since the start (model time units)")
    if samples > 1:
        ax = fig.add_subplot(grid[:, 1])
        for c, color in zip(cases, _colors(len(cases))):
            diff = arch.traj_state[c, 0, shown, :] - arch.traj_state[c, 1, shown, :]
            distance = np.sqrt(np.sum(diff * diff, axis=1))
            distance[distance <= 0] = np.nan
            ax.semilogy(t[shown], distance, color=color, linewidth=1.2, label=arch.case_label(c))
        ax.set_xlabel("model time since the start (model time units)")
        ax.set_ylabel("distance between members 0 and 1 (model units)")
        ax.set_title("divergence of two nearby starts")
        ax.grid(alpha=0.3, which="both")
        ax.legend(loc="lower right")
    caption = (f"{var} of the stored members (the first members of each case, started a "
               f"small perturbation apart) over the first {window:g} model time units, for "
               f"{len(cases)} cases; the dotted line marks the end of the spin-up. Right: their "
               f"distance in state space, on a logarithmic scale: nearby states diverge until "
               f"the distance saturates at the size of the attractor.")
    return [_save(fig, outdir, "trajectories", title, caption)]


# --- heat map of the response for a two-axis sweep ------------------------------------------

def _cell_edges(values):
    if values.size == 1:
        return np.array([values[0] - 0.5, values[0] + 0.5])
    mid = 0.5 * (values[1:] + values[:-1])
    return np.concatenate([[2 * values[0] - mid[0]], mid, [2 * values[-1] - mid[-1]]])


def fig_heatmap(arch, outdir):
    if len(arch.axes) != 2:
        count = {0: "no swept axis", 1: "one swept axis"}.get(len(arch.axes),
                                                              f"{len(arch.axes)} swept axes")
        return [Skip("heatmap", f"a heat map needs a two-axis sweep; the campaign has {count}")]
    ax_x, ax_y = arch.axes
    ux, uy = np.unique(arch.axis_values[ax_x]), np.unique(arch.axis_values[ax_y])
    ix = np.searchsorted(ux, arch.axis_values[ax_x])
    iy = np.searchsorted(uy, arch.axis_values[ax_y])
    out = []
    obs_pages = _pages(list(range(len(arch.observables))))
    for page, obs in enumerate(obs_pages):
        fig, title = _new_figure(arch, f"response of the time means to {ax_x} and {ax_y}")
        axes = fig.subplots(*_grid(len(obs)), squeeze=False)
        for ax, o in zip(axes.flat, obs):
            name = arch.observables[o]
            grid = np.full((uy.size, ux.size), np.nan)
            grid[iy, ix] = arch.mean[:, o]
            mesh = ax.pcolormesh(_cell_edges(ux), _cell_edges(uy), grid, cmap="viridis",
                                 shading="flat")
            fig.colorbar(mesh, ax=ax, location="bottom", shrink=0.9,
                         label=f"time mean of {name} (model units)")
            if grid.size <= 36:
                norm = mesh.norm
                for j in range(uy.size):
                    for i in range(ux.size):
                        if np.isfinite(grid[j, i]):
                            dark = norm(grid[j, i]) < 0.6
                            ax.text(ux[i], uy[j], f"{grid[j, i]:.3g}", ha="center",
                                    va="center", fontsize=9,
                                    color="white" if dark else "black")
            if ux.size <= 12:
                ax.set_xticks(ux)
            if uy.size <= 12:
                ax.set_yticks(uy)
            ax.set_xlabel(f"{ax_x} (model units)")
            ax.set_ylabel(f"{ax_y} (model units)")
            ax.set_title(f"<{name}>")
        _hide_unused(axes, len(obs))
        caption = (f"Ensemble mean of the members' time means over the grid of {ax_x} and "
                   f"{ax_y}, one cell per case.")
        out.append(_save(fig, outdir, _page_name("heatmap", page, len(obs_pages)), title,
                         caption))
    return out


# --- datasets of later features: drawn when the archive has them ----------------------------

def fig_snapshots(arch, outdir):
    if arch.snap_time is None or arch.snap_mean is None:
        return [Skip("snapshots", "the archive has no snapshot statistics (/snapshot)")]
    t = arch.snap_time
    cases = arch.few_cases(4)
    colors = _colors(len(cases))
    names = arch.snap_observables[:PANELS_PER_PAGE - (1 if arch.snap_regime is not None else 0)]
    n_panels = len(names) + (1 if arch.snap_regime is not None else 0)
    fig, title = _new_figure(arch, "ensemble statistics at snapshot times")
    axes = fig.subplots(*_grid(n_panels), squeeze=False)
    for ax, name in zip(axes.flat, names):
        o = arch.snap_observables.index(name)
        for c, color in zip(cases, colors):
            mean = arch.snap_mean[c, :, o]
            ax.plot(t, mean, color=color, linewidth=1.4, label=arch.case_label(c))
            if arch.snap_variance is not None:
                spread = np.sqrt(arch.snap_variance[c, :, o])
                ax.fill_between(t, mean - spread, mean + spread, color=color, alpha=0.2,
                                linewidth=0)
        ax.set_ylabel(f"{name} across members (model units)")
        ax.set_title(f"{name}: ensemble mean \u00b1 one standard deviation")
    if arch.snap_regime is not None:
        ax = axes.flat[len(names)]
        for c, color in zip(cases, colors):
            ax.plot(t, arch.snap_regime[c, :, 0], color=color, linewidth=1.4)
        label = arch.snap_regimes[0] if arch.snap_regimes else "0"
        ax.set_ylabel("share of members (fraction, 0-1)")
        ax.set_title(f"members in regime {label}")
    for ax in axes.flat[:n_panels]:
        ax.set_xlabel("model time (model time units)")
        ax.grid(alpha=0.3)
    _hide_unused(axes, n_panels)
    axes.flat[0].legend(loc="best")
    caption = ("Statistics across the members at each snapshot time: the ensemble mean and "
               "its spread (one standard deviation across members), for a few cases.")
    return [_save(fig, outdir, "snapshots", title, caption)]


def fig_transient(arch, outdir):
    if arch.transient is None:
        return [Skip("transient", "the archive has no transient response (/transient: paired "
                                  "cases with snapshots)")]
    t = arch.snap_time
    ref = arch.paired_with
    cases = [c for c in arch.few_cases(5) if c != ref][:4]
    colors = _colors(len(cases))
    names = arch.snap_observables[:PANELS_PER_PAGE]
    fig, title = _new_figure(arch, f"transient response against case {ref}")
    axes = fig.subplots(*_grid(len(names)), squeeze=False)
    for ax, name in zip(axes.flat, names):
        o = arch.snap_observables.index(name)
        spread = arch.transient_ref_std[:, o]
        ax.fill_between(t, -spread, spread, color="0.85", linewidth=0,
                        label="reference spread (± one std)")
        ax.axhline(0.0, color="0.4", linewidth=0.8)
        for c, color in zip(cases, colors):
            ci = arch.transient_ci[c, :, o]
            ax.fill_between(t, ci[:, 0], ci[:, 1], color=color, alpha=0.3, linewidth=0)
            ax.plot(t, arch.transient[c, :, o], color=color, linewidth=1.4,
                    label=arch.case_label(c))
            emerged = arch.emergence[c, o]
            if np.isfinite(emerged):
                ax.axvline(emerged, color=color, linestyle=":", linewidth=1.2)
        ax.set_xlabel("model time (model time units)")
        ax.set_ylabel(f"{name}: case less reference (model units)")
        ax.set_title(f"response of {name}")
        ax.grid(alpha=0.3)
    _hide_unused(axes, len(names))
    axes.flat[0].legend(loc="best")
    caption = (f"Mean over the members of each member's difference from the same member of the "
               f"reference case {ref} (paired: same start, same noise), with its 95% "
               f"confidence interval; dotted lines mark the time of emergence (from then on "
               f"every interval excludes 0). Grey: the spread across the reference's members, "
               f"the scale of the internal variability.")
    return [_save(fig, outdir, "transient", title, caption)]


def fig_twins(arch, outdir):
    if arch.twin_lead is None or arch.twin_log_sep is None:
        return [Skip("twins", "the archive has no twin experiment (/twins)")]
    fig, title = _new_figure(arch, "twin experiment: error growth")
    survival = arch.twin_unseparated is not None
    axes = fig.subplots(1, 2 if survival else 1, squeeze=False)[0]
    ax = axes[0]
    cases = arch.few_cases(6)
    fitted = False
    for c, color in zip(cases, _colors(len(cases))):
        has_rate = arch.twin_growth_rate is not None and np.isfinite(arch.twin_growth_rate[c])
        label = arch.case_label(c) + ("" if has_rate or arch.twin_growth_rate is None
                                      else " (no growth rate)")
        ax.plot(arch.twin_lead, arch.twin_log_sep[c], color=color, linewidth=1.5, label=label)
        if has_rate:
            first, last = arch.twin_growth_window[c]
            inside = (arch.twin_lead >= first) & (arch.twin_lead <= last)
            t, rate = arch.twin_lead[inside], arch.twin_growth_rate[c]
            offset = np.mean(arch.twin_log_sep[c][inside] - rate * t)
            ax.plot(t, offset + rate * t, color="black", linestyle="--", linewidth=0.9)
            fitted = True
        if survival:
            axes[1].step(arch.twin_lead, arch.twin_unseparated[c], where="post", color=color,
                         linewidth=1.5)
            if arch.horizon_median is not None and np.isfinite(arch.horizon_median[c]):
                axes[1].plot([arch.horizon_median[c]], [0.5], marker="o", color=color)
    ax.set_xlabel("lead time (model time units)")
    ax.set_ylabel("mean log separation of the twins (log of model units)")
    ax.grid(alpha=0.3)
    handles, _ = ax.get_legend_handles_labels()
    if fitted:
        handles.append(Line2D([], [], color="black", linestyle="--",
                              label="least-squares fit over the linear phase"))
    ax.legend(handles=handles, loc="best")
    caption = ("Mean logarithm of the distance between each member and its slightly perturbed "
               "twin against lead time; the slope of the straight part (dashed: the fit over "
               "the linear phase, /twins/growth_rate) is the growth rate of small errors. A "
               "case whose separation does not rise significantly gets no fit.")
    if survival:
        axes[1].axhline(0.5, color="grey", linewidth=0.8, linestyle=":")
        axes[1].set_ylim(-0.02, 1.02)
        axes[1].set_xlabel("lead time (model time units)")
        axes[1].set_ylabel("share of pairs not yet separated")
        axes[1].set_title("survival of the pairs (Kaplan-Meier); dots: median horizon")
        axes[1].grid(alpha=0.3)
        caption += (" Right: the share of the pairs whose separation has not yet passed the "
                    "threshold (/twins/unseparated_fraction); where it crosses one half is the "
                    "median horizon, which counts the pairs that never separated.")
    return [_save(fig, outdir, "twins", title, caption)]


def fig_lyapunov(arch, outdir):
    if arch.lyapunov is None:
        return [Skip("lyapunov", "the archive has no Lyapunov exponents (/member/lyapunov)")]
    if not arch.axes:
        return [Skip("lyapunov", "the campaign has no swept parameter")]
    out = []
    n_exp = min(arch.lyapunov.shape[2], PANELS_PER_PAGE)
    for axis in arch.axes:
        groups, _ = _groups(arch, axis)
        colors = _colors(len(groups)) if len(groups) > 1 else ["tab:red"]
        fig, title = _new_figure(arch, f"Lyapunov exponents against {axis}")
        axes = fig.subplots(*_grid(n_exp), squeeze=False)
        for k, ax in zip(range(n_exp), axes.flat):
            handles = _per_member_vs_axis(arch, axis, ax, arch.lyapunov[:, :, k],
                                          arch.valid_mask, colors)
            ax.axhline(0, color="grey", linewidth=0.8)
            ax.set_xlabel(f"{arch.axis_name(axis)} (model units)")
            ax.set_ylabel(f"exponent {k + 1} (per model time unit)")
            ax.set_title(f"Lyapunov exponent {k + 1}")
            ax.grid(alpha=0.3)
            if k == 0:
                ax.legend(handles=_standard_handles(fit=False) + handles, loc="best")
        _hide_unused(axes, n_exp)
        caption = (f"Ensemble mean of the members' Lyapunov exponents against {axis}, with the "
                   f"95% confidence interval of the mean; faint points are the members.")
        out.append(_save(fig, outdir, f"lyapunov-{axis}", title, caption))
    return out


def _draw_medians(arch, axis, ax):
    """The Kaplan-Meier median horizon of each case with its interval against `axis`; an upper
    end beyond the window is drawn to the last lead with a caret. Returns the legend handle."""
    x = arch.axis_values[axis]
    last = arch.twin_lead[-1] if arch.twin_lead is not None else np.nan
    for c in range(arch.cases):
        m = arch.horizon_median[c]
        if not np.isfinite(m):
            continue
        low, high = arch.horizon_median_ci[c]
        top = high if np.isfinite(high) else last
        ax.plot([x[c], x[c]], [low, top], color="black", linewidth=1.0)
        ax.plot([x[c]], [m], marker="D", color="black", markersize=4)
        if not np.isfinite(high):
            ax.plot([x[c]], [top], marker="^", color="black", markersize=5)
    return Line2D([], [], color="black", marker="D", markersize=4,
                  label="median horizon, 95% interval")


def fig_horizon(arch, outdir):
    if arch.horizon is None:
        return [Skip("horizon", "the archive has no predictability horizon (/member/horizon)")]
    if not arch.axes:
        return [Skip("horizon", "the campaign has no swept parameter")]
    out = []
    for axis in arch.axes:
        groups, _ = _groups(arch, axis)
        colors = _colors(len(groups)) if len(groups) > 1 else ["tab:green"]
        fig, title = _new_figure(arch, f"predictability horizon against {axis}")
        ax = fig.subplots()
        handles = _per_member_vs_axis(arch, axis, ax, arch.horizon, arch.valid_mask, colors)
        reached = np.isfinite(arch.horizon) & arch.valid_mask
        ax.set_xlabel(f"{arch.axis_name(axis)} (model units)")
        ax.set_ylabel("horizon (model time units)")
        ax.set_title(f"time for the twin separation to pass the threshold "
                     f"({int(reached.sum())} valid members reached it)")
        ax.grid(alpha=0.3)
        handles = _standard_handles(fit=False) + handles
        caption = (f"Ensemble mean time for a member and its twin to separate beyond the "
                   f"threshold, against {axis}, with the 95% confidence interval of the mean; "
                   f"members that never passed it are left out.")
        if arch.horizon_median is not None:
            handles.append(_draw_medians(arch, axis, ax))
            caption += (" Black diamonds: the median horizon of all valid pairs (Kaplan-Meier, "
                        "pairs not separated by the end of the window counted as such) with "
                        "its 95% interval; a caret marks an interval open beyond the window.")
        ax.legend(handles=handles, loc="best")
        out.append(_save(fig, outdir, f"horizon-{axis}", title, caption))
    return out


def all_figures(arch, outdir, window):
    """Every figure in report order."""
    results = []
    results += fig_response(arch, outdir)
    results += fig_local_slope(arch, outdir)
    results += fig_predicted(arch, outdir)
    results += fig_regimes(arch, outdir)
    results += fig_residence(arch, outdir)
    results += fig_heatmap(arch, outdir)
    results += fig_histogram(arch, outdir)
    results += fig_trajectories(arch, outdir, window)
    results += fig_snapshots(arch, outdir)
    results += fig_transient(arch, outdir)
    results += fig_twins(arch, outdir)
    results += fig_lyapunov(arch, outdir)
    results += fig_horizon(arch, outdir)
    return results
