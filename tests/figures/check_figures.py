#!/usr/bin/python3
"""Checks of scripts/plot-archive, its report and `chaosweep summary`, against the archives
read with h5py (and the lines of docs/archive.md run with xarray and h5py).

Usage: check_figures.py CHECK ARGS...   (see CHECKS at the end; each exits non-zero on failure)

Outside sources used by the checks, named beside each use:
  - h5py: every number and name compared is read from the archive with h5py;
  - the PNG specification (ISO/IEC 15948): signature, IHDR width and height, text chunks;
  - matplotlib.image.imread (Debian's matplotlib): decodes the PNG pixels;
  - Python's json, csv and html.parser modules, and `/usr/bin/python3 -m json.tool`.
"""
import base64
import csv
import html.parser
import io
import json
import math
import os
import re
import shutil
import struct
import subprocess
import sys
import zlib

import h5py
import numpy as np

# The figure size that plot-archive promises (README, "Figures and report").
WIDTH, HEIGHT = 1200, 750
LATER = ("snapshots", "twins", "lyapunov", "horizon")


def fail(message):
    print("FAIL: " + message)
    sys.exit(1)


def text(v):
    return v.decode() if isinstance(v, bytes) else str(v)


class ArchiveData:
    """What the checks compare against, read with h5py."""

    def __init__(self, path):
        with h5py.File(path, "r") as f:
            self.campaign = text(f.attrs["campaign"])
            self.spec_yaml = text(f.attrs["spec_yaml"])
            self.members = int(f.attrs["members_per_case"])
            self.observables = [text(v) for v in f["observable"][()]]
            self.axes = [text(v) for v in f["response/axis"][()]] if "response/axis" in f else []
            predicted = "response/predicted_slope" in f
            self.forcings = ([text(v) for v in f["response/forcing_parameter"][()]]
                             if predicted else [])
            self.predicted = f["response/predicted_slope"][()] if predicted else None
            self.predicted_stderr = f["response/predicted_slope_stderr"][()] if predicted else None
            self.axis_values = {a: f["case/" + a][()] for a in self.axes}
            self.status = f["member/status"][()]
            self.valid = f["ensemble/valid_members"][()]
            self.effective = f["ensemble/effective_members"][()]
            self.mean = f["ensemble/time_mean"][()]
            self.std = f["ensemble/time_mean_std"][()]
            self.ci = f["ensemble/time_mean_ci95"][()]
            self.mean_stderr = f["ensemble/time_mean_stderr"][()]
            self.effective_samples = f["ensemble/effective_samples"][()]
            self.decorrelation = f["ensemble/decorrelation_time"][()]
            self.regimes = ([text(v) for v in f["ensemble/regime"][()]]
                            if "ensemble/regime" in f else [])
            self.regime = f["ensemble/regime_fraction"][()] if self.regimes else None
            self.regime_std = f["ensemble/regime_fraction_std"][()] if self.regimes else None
            self.regime_ci = f["ensemble/regime_fraction_ci95"][()] if self.regimes else None
            self.residence = f["ensemble/regime_mean_residence"][()] if self.regimes else None
            self.residence_std = (f["ensemble/regime_mean_residence_std"][()] if self.regimes
                                  else None)
            self.residence_ci = (f["ensemble/regime_mean_residence_ci95"][()] if self.regimes
                                 else None)
            self.slope = f["response/slope"][()] if self.axes else None
            self.slope_stderr = f["response/slope_stderr"][()] if self.axes else None
            fit = self.axes and "response/linear_fit_chi2" in f
            self.fit_chi2 = f["response/linear_fit_chi2"][()] if fit else None  # axis, observable
            self.fit_dof = f["response/linear_fit_dof"][()] if fit else None
            self.fit_p = f["response/linear_fit_pvalue"][()] if fit else None
            self.local_slope = f["response/local_slope"][()] if fit else None
            self.local_slope_stderr = f["response/local_slope_stderr"][()] if fit else None
            self.snap_time = f["snapshot/time"][()] if "snapshot" in f else None
            self.snap_mean = f["snapshot/mean"][()] if "snapshot" in f else None
            self.snap_var = f["snapshot/variance"][()] if "snapshot" in f else None
            self.non_chaotic = f["ensemble/non_chaotic"][()]
            self.non_chaotic_reason = [text(v) for v in f["ensemble/non_chaotic_reason"][()]]
        self.cases = self.status.shape[0]

    def snapshots_shown(self):
        """What `summary` shows of the snapshots (docs/archive.md, "Summary formats"): the first
        observable at the first, middle and last snapshot time, per case (mean, std across
        members, 95% interval of the mean with Student's t from scipy), as
        {case: [(k, time, mean, std, (low, high))]}."""
        if self.snap_time is None:
            return {}
        from scipy.stats import t as student
        n = len(self.snap_time)
        picks = sorted({0, (n - 1) // 2, n - 1})
        out = {}
        for c in range(self.cases):
            valid = float(self.valid[c])
            q = student.ppf(0.975, valid - 1)
            rows = []
            for k in picks:
                mean, var = self.snap_mean[c, k, 0], self.snap_var[c, k, 0]
                half = q * np.sqrt(var / valid)
                rows.append((k, self.snap_time[k], mean, np.sqrt(var), (mean - half, mean + half)))
            out[c] = rows
        return out

    def valid_text(self):
        return f"valid members: {int(self.valid.sum())} of {self.status.size}"


# --- PNG files --------------------------------------------------------------------------------

def png_info(path):
    """Width, height and text chunks of a PNG (chunk layout of the PNG specification)."""
    with open(path, "rb") as f:
        data = f.read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        fail(f"{path}: not a PNG file")
    pos, width, height, texts = 8, None, None, {}
    while pos + 8 <= len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            width, height = struct.unpack(">II", body[:8])
        elif kind == b"tEXt":
            key, _, value = body.partition(b"\0")
            texts[key.decode("latin-1")] = value.decode("latin-1")
        elif kind == b"zTXt":
            key, _, rest = body.partition(b"\0")
            texts[key.decode("latin-1")] = zlib.decompress(rest[1:]).decode("latin-1")
        elif kind == b"iTXt":
            key, _, rest = body.partition(b"\0")
            compressed, rest = rest[0], rest[2:]
            _, _, rest = rest.partition(b"\0")   # language tag
            _, _, rest = rest.partition(b"\0")   # translated keyword
            texts[key.decode("latin-1")] = (zlib.decompress(rest) if compressed else rest).decode()
        elif kind == b"IEND":
            break
        pos += 12 + length
    return width, height, texts


def check_png(path, arch):
    if not os.path.isfile(path) or os.path.getsize(path) == 0:
        fail(f"{path}: missing or empty")
    width, height, texts = png_info(path)
    if (width, height) != (WIDTH, HEIGHT):
        fail(f"{path}: {width} x {height} pixels, expected {WIDTH} x {HEIGHT}")
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.image
    pixels = matplotlib.image.imread(path)        # decoded by matplotlib (outside decoder)
    if pixels.shape[:2] != (HEIGHT, WIDTH):
        fail(f"{path}: decoded shape {pixels.shape}")
    ink = np.mean(np.any(pixels[:, :, :3] < 0.9, axis=2))
    if ink < 0.02:
        fail(f"{path}: nearly blank ({ink:.1%} of the pixels drawn)")
    title = texts.get("Title", "")
    if arch.campaign not in title or arch.valid_text() not in title:
        fail(f"{path}: title {title!r} lacks the campaign name or '{arch.valid_text()}'")
    return title


# --- the report -------------------------------------------------------------------------------

class ReportParser(html.parser.HTMLParser):
    """Figures, images, tables, preformatted blocks and list items of the report."""

    def __init__(self):
        super().__init__()
        self.figures, self.images, self.tables, self.pre, self.items = [], [], [], {}, []
        self.links = []
        self._cell = self._pre = self._item = None
        self._row = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "figure":
            self.figures.append(a.get("id"))
        elif tag == "img":
            self.images.append(a.get("src", ""))
        elif tag in ("link", "script", "iframe", "object", "embed"):
            self.links.append(tag)
        elif tag == "table":
            self.tables.append((a.get("class"), []))
        elif tag == "tr":
            self._row = []
            self.tables[-1][1].append(self._row)
        elif tag in ("td", "th"):
            self._cell = []
        elif tag == "pre":
            self._pre = (a.get("class"), [])
        elif tag == "li":
            self._item = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self._row.append("".join(self._cell).strip())
            self._cell = None
        elif tag == "pre" and self._pre is not None:
            self.pre[self._pre[0]] = "".join(self._pre[1])
            self._pre = None
        elif tag == "li" and self._item is not None:
            self.items.append("".join(self._item).strip())
            self._item = None

    def handle_data(self, data):
        for part in (self._cell, self._item):
            if part is not None:
                part.append(data)
        if self._pre is not None:
            self._pre[1].append(data)


def printed_close(printed, value):
    """A number printed with a fixed count of decimals equals `value` rounded to them."""
    decimals = len(printed.split(".")[1]) if "." in printed else 0
    return abs(float(printed) - value) <= 0.5 * 10.0 ** -decimals * (1 + 1e-9) + 1e-12


def printed_sig_close(printed, value, digits):
    """A number printed with `digits` significant digits (%g) equals `value` rounded to them
    (a NaN prints as nan)."""
    if printed == "nan" or not np.isfinite(value):
        return printed == "nan" and np.isnan(value)
    return abs(float(printed) - value) <= 0.5 * 10.0 ** (1 - digits) * abs(value) * (1 + 1e-9)


ESTIMATE = re.compile(r"^(-?\d+\.?\d*) \[(-?\d+\.?\d*), (-?\d+\.?\d*)\]$")


def check_estimate(cell, mean, ci, where):
    """'mean [low, high]' equals the archive's mean and 95% interval to the printed digits."""
    if not np.isfinite(mean):
        if cell != "n/a":
            fail(f"{where}: {cell!r} for a non-finite mean")
        return
    m = ESTIMATE.match(cell)
    if not m or not all(printed_close(t, v) for t, v in zip(m.groups(), (mean, ci[0], ci[1]))):
        fail(f"{where}: {cell!r} is not the archive's {mean!r} [{ci[0]!r}, {ci[1]!r}]")


def check_case_table(rows, arch, names, mean, ci, where):
    header = rows[0]
    expected = (["case"] + [f"{a} (model units)" for a in arch.axes] + ["valid / total members"])
    if header[:len(expected)] != expected:
        fail(f"{where}: header {header}")
    if [h.split(" (")[0] for h in header[len(expected):]] != names:
        fail(f"{where}: columns {header[len(expected):]} are not {names}")
    if len(rows) - 1 != arch.cases:
        fail(f"{where}: {len(rows) - 1} rows for {arch.cases} cases")
    for c, row in enumerate(rows[1:]):
        if row[0] != str(c):
            fail(f"{where}: row {c} is case {row[0]}")
        for a, axis in enumerate(arch.axes):
            if not printed_sig_close(row[1 + a], float(arch.axis_values[axis][c]), 6):
                fail(f"{where}: case {c} {axis} = {row[1 + a]}")
        if row[len(arch.axes) + 1] != f"{arch.valid[c]} / {arch.members}":
            fail(f"{where}: case {c} valid/total {row[len(arch.axes) + 1]}")
        for k, name in enumerate(names):
            check_estimate(row[len(expected) + k], mean[c, k], ci[c, k], f"{where} case {c} {name}")


def check_report(outdir, arch, expect, skip, program_table):
    path = os.path.join(outdir, "report.html")
    with open(path, encoding="utf-8") as f:
        page = f.read()
    parser = ReportParser()
    parser.feed(page)
    # Self-contained: no external URL, no linked or scripted resource, every image inline.
    if re.search(r"(?i)\b(?:https?|ftp):|url\(|@import", page) or parser.links:
        fail("report.html refers to an external resource")
    if parser.figures != expect:
        fail(f"report.html figures {parser.figures}, expected {expect}")
    if len(parser.images) != len(expect):
        fail(f"report.html has {len(parser.images)} images for {len(expect)} figures")
    for name, src in zip(expect, parser.images):
        prefix = "data:image/png;base64,"
        with open(os.path.join(outdir, name + ".png"), "rb") as f:
            if not src.startswith(prefix) or base64.b64decode(src[len(prefix):]) != f.read():
                fail(f"report.html: the image of {name} is not {name}.png embedded")
    for name in skip:
        if not any(item.startswith(name + ":") for item in parser.items):
            fail(f"report.html does not list {name} as not drawn")
    if "idealised" not in page or "projection" not in page:
        fail("report.html lacks the caution about idealised models")
    if parser.pre.get("spec") != arch.spec_yaml:
        fail("report.html: the spec differs from the archive's spec_yaml")
    if parser.pre.get("program-summary") != program_table:
        fail("report.html: the program's summary table is not included verbatim")
    tables = {cls: rows for cls, rows in parser.tables if cls != "summary"}
    summaries = [rows for cls, rows in parser.tables if cls == "summary"]
    check_case_table(summaries[0], arch, arch.observables, arch.mean, arch.ci,
                     "report time-mean table")
    if arch.regimes:
        check_case_table(summaries[1], arch, arch.regimes, arch.regime, arch.regime_ci,
                         "report regime table")
    if arch.axes:
        rows = tables["slopes"][1:]
        if len(rows) != len(arch.axes) * len(arch.observables):
            fail("report slope table has the wrong number of rows")
        for row in rows:
            a, o = arch.axes.index(row[1]), arch.observables.index(row[0])
            slope, err = row[2].split(" \u00b1 ")
            if not (printed_sig_close(slope, arch.slope[a, o], 4)
                    and printed_sig_close(err, arch.slope_stderr[a, o], 2)):
                fail(f"report slope {row} differs from the archive")


def run_plot(plot, archive, outdir, program):
    if os.path.isdir(outdir):
        shutil.rmtree(outdir)
    done = subprocess.run([plot, archive, outdir, "--chaosweep", program], capture_output=True,
                          text=True)
    if done.returncode != 0:
        fail(f"plot-archive exited {done.returncode}: {done.stderr.strip()}")
    return done.stdout


def check_plot(plot, archive, outdir, program, expect_csv, skip_csv):
    """Every applicable figure is a PNG of the promised size titled with the campaign and its
    valid members; every other one is skipped with a note; the report holds them all."""
    expect = [] if expect_csv == "-" else expect_csv.split(",")
    skip = [] if skip_csv == "-" else skip_csv.split(",")
    arch = ArchiveData(archive)
    out = run_plot(plot, archive, outdir, program)
    pngs = sorted(n[:-4] for n in os.listdir(outdir) if n.endswith(".png"))
    if pngs != sorted(expect):
        fail(f"figures {pngs}, expected {sorted(expect)}\n{out}")
    for name in expect:
        check_png(os.path.join(outdir, name + ".png"), arch)
        if f"wrote {os.path.join(outdir, name + '.png')}" not in out:
            fail(f"plot-archive did not report writing {name}.png")
    skipped = re.findall(r"^skipped (\S+): .+$", out, re.M)
    if skipped != skip:
        fail(f"skip notes for {skipped}, expected {skip}\n{out}")
    table = subprocess.run([program, "summary", archive, "--format", "table"], check=True,
                           capture_output=True, text=True).stdout
    check_report(outdir, arch, expect, skip, table)
    print(f"ok: {len(expect)} figures of {WIDTH} x {HEIGHT} pixels, {len(skip)} skipped with a "
          f"note, report.html self-contained with the summary tables equal to the archive")


def check_later_datasets(plot, archive, outdir):
    """The figures of snapshot, twin, Lyapunov and horizon datasets are drawn when an archive
    holds them. Their layout is the archive schema's (`chaosweep schema`); the values are
    derived from this archive's own stored trajectories (two members per case), so the drawing
    runs on numbers of the project's scenario. This checks that the figures are drawn, not those numbers."""
    os.makedirs(outdir, exist_ok=True)
    copy = os.path.join(outdir, "later.h5")
    shutil.copyfile(archive, copy)
    with h5py.File(copy, "a") as f:
        t = f["trajectory/time"][()]
        state = f["trajectory/state"][()]                 # case, sample, step, variable
        names = [text(v) for v in f["trajectory/variable"][()]]
        members = f["member/status"].shape[1]
        every = max(1, int(round(1.0 / (t[1] - t[0]))))   # one snapshot per model time unit
        obs = [names.index(n) for n in ("x", "y", "z")]
        snap = state[:, :, ::every, :][..., obs]          # case, sample, time, observable
        f["snapshot/time"] = t[::every]
        f["snapshot/mean"] = snap.mean(axis=1)             # case, time, observable
        f["snapshot/variance"] = snap.var(axis=1, ddof=1)
        positive = (snap[..., 0] >= 0).mean(axis=1)        # case, time
        f["snapshot/regime_fraction"] = np.stack([positive, 1 - positive], axis=2)
        distance = np.linalg.norm(state[:, 0] - state[:, 1], axis=2)   # case, step
        lead = t <= 20
        f["twins/lead"] = t[lead]
        f["twins/log_separation"] = np.log(distance[:, lead])
        growth = (np.log(distance[:, 1:]) - np.log(distance[:, :-1])) / (t[1] - t[0])
        lyapunov = np.full((state.shape[0], members, 1), np.nan)
        horizon = np.full((state.shape[0], members), np.nan)
        for c in range(state.shape[0]):
            first = np.argmax(distance[c] > 1.0)
            lyapunov[c, :2, 0] = growth[c, :max(first, 1)].mean()
            horizon[c, :2] = t[first]
        f["member/lyapunov"] = lyapunov
        f["member/horizon"] = horizon
    figures_dir = os.path.join(outdir, "figures")
    shutil.rmtree(figures_dir, ignore_errors=True)
    done = subprocess.run([plot, copy, figures_dir], capture_output=True, text=True)
    if done.returncode != 0:
        fail(f"plot-archive exited {done.returncode}: {done.stderr.strip()}")
    arch = ArchiveData(copy)
    for name in ("snapshots", "twins", "lyapunov-forcing", "horizon-forcing"):
        check_png(os.path.join(figures_dir, name + ".png"), arch)
    for name in LATER:
        if f"skipped {name}:" in done.stdout:
            fail(f"{name} skipped although the archive has its datasets:\n{done.stdout}")
    print("ok: snapshot, twin, Lyapunov and horizon figures drawn from their datasets")


# --- chaosweep summary ------------------------------------------------------------------------

def summary(program, archive, fmt):
    return subprocess.run([program, "summary", archive, "--format", fmt], check=True,
                          capture_output=True, text=True).stdout


def same(doc_value, archive_value):
    """JSON numbers are printed to round-trip exactly; NaN is null."""
    v = float(archive_value)
    return doc_value is None if not math.isfinite(v) else doc_value == v


def check_summary_json(archive, program):
    """`summary --format json` round-trips through `python3 -m json.tool`, keeps its keys, and
    every number equals the archive's dataset (h5py) exactly."""
    out = summary(program, archive, "json")
    tool = subprocess.run(["/usr/bin/python3", "-m", "json.tool"], input=out,
                          capture_output=True, text=True)
    if tool.returncode != 0:
        fail(f"json.tool rejects the summary: {tool.stderr.strip()}")
    doc = json.loads(out)
    if json.loads(tool.stdout) != doc:
        fail("the summary changes through json.tool")
    arch = ArchiveData(archive)
    keys = {"campaign", "model", "status", "format_version", "members_per_case", "axes",
            "observables", "regimes", "cases", "response", "tool_version", "created_utc",
            "units", "interval"}
    if not keys <= set(doc):
        fail(f"summary json lacks {sorted(keys - set(doc))}")
    if (doc["campaign"], doc["members_per_case"], doc["axes"], doc["observables"],
            doc["regimes"]) != (arch.campaign, arch.members, arch.axes, arch.observables,
                                arch.regimes):
        fail("summary json: campaign, members, axes, observables or regimes differ")
    if len(doc["cases"]) != arch.cases:
        fail("summary json: wrong number of cases")
    for c, case in enumerate(doc["cases"]):
        if case["index"] != c or case["members"] != arch.members \
                or case["valid_members"] != int(arch.valid[c]) \
                or not same(case["effective_members"], arch.effective[c]):
            fail(f"case {c}: members {case}")
        for a in arch.axes:
            if not same(case["parameters"][a], arch.axis_values[a][c]):
                fail(f"case {c}: parameter {a}")
        if (case["non_chaotic"], case["non_chaotic_reason"]) != (
                bool(arch.non_chaotic[c]), arch.non_chaotic_reason[c]):
            fail(f"case {c}: non-chaotic flag or reason differs from the archive")
        for o, name in enumerate(arch.observables):
            e = case["time_mean"][name]
            if not (same(e["mean"], arch.mean[c, o]) and same(e["std"], arch.std[c, o])
                    and all(same(x, y) for x, y in zip(e["ci95"], arch.ci[c, o]))
                    and same(e["stderr"], arch.mean_stderr[c, o])
                    and same(e["effective_samples"], arch.effective_samples[c, o])
                    and same(e["decorrelation_time"], arch.decorrelation[c, o])):
                fail(f"case {c} {name}: {e} differs from the archive")
        for k, label in enumerate(arch.regimes):
            e = case["regime_fraction"][label]
            if not (same(e["mean"], arch.regime[c, k]) and same(e["std"], arch.regime_std[c, k])
                    and all(same(x, y) for x, y in zip(e["ci95"], arch.regime_ci[c, k]))):
                fail(f"case {c} regime {label}: {e} differs from the archive")
    if len(doc["response"]) != len(arch.axes) * len(arch.observables):
        fail("summary json: wrong number of response rows")
    for row in doc["response"]:
        a, o = arch.axes.index(row["axis"]), arch.observables.index(row["observable"])
        if not (same(row["slope"], arch.slope[a, o])
                and same(row["stderr"], arch.slope_stderr[a, o])):
            fail(f"response {row} differs from the archive")
    rows = doc.get("predicted_response", [])
    if len(rows) != len(arch.forcings) * len(arch.observables):
        fail("summary json: wrong number of predicted_response rows")
    for row in rows:
        p, o = arch.forcings.index(row["forcing"]), arch.observables.index(row["observable"])
        if not (all(same(x, y) for x, y in zip(row["predicted_slope"], arch.predicted[p, :, o]))
                and all(same(x, y) for x, y in zip(row["stderr"], arch.predicted_stderr[p, :, o]))
                and len(row["predicted_slope"]) == arch.cases):
            fail(f"predicted response {row} differs from the archive")
    print(f"ok: summary json round-trips through json.tool and equals the archive "
          f"({arch.cases} cases)")


def check_summary_csv(archive, program):
    """`summary --format csv`: the documented header and one row per case and quantity, every
    number equal to the archive's dataset (printed to round-trip exactly)."""
    arch = ArchiveData(archive)
    rows = list(csv.reader(io.StringIO(summary(program, archive, "csv"))))
    header = ["case"] + arch.axes + ["quantity", "name", "mean", "std", "ci95_low", "ci95_high",
                                     "valid_members", "members", "units", "stderr",
                                     "effective_samples", "decorrelation_time"]
    if rows[0] != header:
        fail(f"csv header {rows[0]}, expected {header}")
    # Rows per case in the documented order: the estimates, then the per-case values
    # (numbers in `mean`, texts in `name`), then the snapshots; units as the archive's attributes.
    expected = []
    for c in range(arch.cases):
        for o, name in enumerate(arch.observables):
            expected.append((c, "time_mean", name, arch.mean[c, o], arch.std[c, o],
                             arch.ci[c, o], "1",
                             [arch.mean_stderr[c, o], arch.effective_samples[c, o],
                              arch.decorrelation[c, o]]))
        for k, label in enumerate(arch.regimes):
            expected.append((c, "regime_fraction", label, arch.regime[c, k],
                             arch.regime_std[c, k], arch.regime_ci[c, k], "1", None))
        for k, label in enumerate(arch.regimes):
            expected.append((c, "regime_mean_residence", label, arch.residence[c, k],
                             arch.residence_std[c, k], arch.residence_ci[c, k],
                             "model_time_unit", None))
        expected.append((c, "valid_members", "", arch.valid[c], None, None, "1", None))
        expected.append((c, "effective_members", "", arch.effective[c], None, None, "1", None))
        expected.append((c, "non_chaotic", "", arch.non_chaotic[c], None, None, "1", None))
        expected.append((c, "non_chaotic_reason", arch.non_chaotic_reason[c], None, None, None,
                         "1", None))
        for k, time, mean, std, ci in arch.snapshots_shown().get(c, []):
            expected.append((c, "snapshot_mean", f"{arch.observables[0]}@{time:.17g}", mean, std,
                             ci, "1", None))
    if len(rows) - 1 != len(expected):
        fail(f"csv has {len(rows) - 1} rows, expected {len(expected)}")
    n_axes = len(arch.axes)
    for row, (c, quantity, name, mean, std, ci, units, errors) in zip(rows[1:], expected):
        values = [float(v) for v in row[1:1 + n_axes]]
        if int(row[0]) != c or values != [float(arch.axis_values[a][c]) for a in arch.axes]:
            fail(f"csv row {row}: case or parameters differ")
        rest = row[1 + n_axes:]
        # an empty cell: the quantity has no such statistic
        numbers = [float(v) if v != "" else None for v in rest[2:6]]
        wanted = [None if v is None else float(v) for v in
                  (mean, std, *(ci if ci is not None else (None, None)))]
        # a snapshot's interval is not an archive dataset: recomputed here with scipy's t
        # quantile, equal to rounding (1e-12 relative)
        tol = 1e-12 if quantity == "snapshot_mean" else 0.0
        if rest[0] != quantity or rest[1] != name or not all(
                (x is None and y is None) or (x is not None and y is not None and (
                    abs(x - y) <= tol * abs(y) or (math.isnan(x) and math.isnan(y))))
                for x, y in zip(numbers, wanted)):
            fail(f"csv row {row} differs from the archive {wanted}")
        if rest[6:9] != [str(int(arch.valid[c])), str(arch.members), units]:
            fail(f"csv row {row}: members or units")
        if errors is None:
            if rest[9:] != ["", "", ""]:
                fail(f"csv row {row}: error columns should be empty")
        elif not all(float(x) == float(y) or (math.isnan(float(x)) and math.isnan(y))
                     for x, y in zip(rest[9:], errors)) or len(rest[9:]) != 3:
            fail(f"csv row {row}: errors differ from the archive {errors}")
    print(f"ok: summary csv equals the archive ({len(expected)} rows)")


def check_summary_table(archive, program):
    """`summary --format table`: aligned columns with the units, valid/total members and
    'mean [95% interval]' equal to the archive's datasets to the printed digits."""
    arch = ArchiveData(archive)
    out = summary(program, archive, "table")
    total = arch.status.size
    if f"{int(arch.valid.sum())} of {total} members valid" not in out.splitlines()[0]:
        fail(f"first line lacks the valid/total members: {out.splitlines()[0]}")
    if "model units" not in out or "95% confidence interval" not in out:
        fail("table lacks its units or the meaning of its intervals")
    seen, block, columns = set(), None, None
    for line in out.splitlines():
        if line.startswith("time mean"):
            block = "time"
        elif line.startswith("regime fraction"):
            block = "regime"
        elif line.startswith("regime mean residence"):
            block = "residence"
        elif line.startswith("response slope"):
            block = "slope"
        elif line.startswith("local slope"):
            block = "local"
        elif line.startswith("response of the ensemble time mean predicted"):
            block = "predicted"
        elif line.startswith("beside each time mean"):
            block = "errors"
        elif line.startswith("snapshots of"):
            block = "snapshot"
        if not line.strip():
            continue
        cells = re.split(r"\s{2,}", line.strip())
        if block in ("time", "regime", "residence", "errors") and re.fullmatch(r"\d+\*", cells[0]):
            # a case flagged non-chaotic is marked "*"
            if not arch.non_chaotic[int(cells[0][:-1])]:
                fail(f"table marks case {cells[0]} non-chaotic, the archive does not")
            cells[0] = cells[0][:-1]
        elif (block in ("time", "regime", "residence") and cells[0].isdigit()
              and arch.non_chaotic[int(cells[0])]):
            fail(f"table does not mark the non-chaotic case {cells[0]}")
        if cells[0] in ("case", "observable"):
            columns = cells
            # Aligned: every column ends at the same character on the header and data rows.
            ends = [m.end() for m in re.finditer(r"\S+(?: \S+)*", line)]
            continue
        if block in ("time", "regime", "residence") and columns and cells[0].isdigit() \
                and len(cells) == len(columns):
            got = [m.end() for m in re.finditer(r"\S+(?: \S+)*", line)]
            if got != ends:
                fail(f"table row not aligned with its header:\n{line}")
            c = int(cells[0])
            lead = 2 + len(arch.axes)
            if columns[:lead] != ["case"] + arch.axes + ["valid/total"]:
                fail(f"table header {columns}")
            for a, axis in enumerate(arch.axes):
                if not printed_sig_close(cells[1 + a], float(arch.axis_values[axis][c]), 6):
                    fail(f"table case {c} {axis} = {cells[1 + a]}")
            if cells[lead - 1] != f"{arch.valid[c]}/{arch.members}":
                fail(f"table case {c}: valid/total {cells[lead - 1]}")
            names, mean, ci = {
                "time": (arch.observables, arch.mean, arch.ci),
                "regime": (arch.regimes, arch.regime, arch.regime_ci),
                "residence": (arch.regimes, arch.residence, arch.residence_ci)}[block]
            for name, cell in zip(columns[lead:], cells[lead:]):
                k = names.index(name)
                check_estimate(cell, mean[c, k], ci[c, k], f"table case {c} {name}")
                seen.add((block, c, name))
        elif block == "errors" and columns and cells[0].isdigit() and len(cells) == len(columns):
            c, lead = int(cells[0]), 2 + len(arch.axes)
            for name, cell in zip(columns[lead:], cells[lead:]):
                o = arch.observables.index(name)
                got = cell.split(" | ")
                wanted = [arch.mean_stderr[c, o], arch.effective_samples[c, o],
                          arch.decorrelation[c, o]]
                if len(got) != 3 or not all(
                        (g == "nan" and math.isnan(w)) or printed_sig_close(g, w, 3)
                        for g, w in zip(got, wanted)):
                    fail(f"table case {c} {name}: errors {cell!r} differ from {wanted}")
                seen.add(("errors", c, name))
        elif block == "snapshot" and columns and cells[0].isdigit():
            c = int(cells[0])
            lead = 2 + len(arch.axes)
            shown = arch.snapshots_shown()[c]
            if columns[lead:] != [f"{arch.observables[0]} t={time:g}" for _, time, *_ in shown]:
                fail(f"snapshot columns {columns[lead:]}")
            for cell, (k, time, mean, _, ci) in zip(cells[lead:], shown):
                check_estimate(cell, mean, ci, f"table case {c} snapshot t={time:g}")
                seen.add(("snapshot", c, k))
        elif block == "slope" and columns and len(cells) in (4, 6) and cells[0] in arch.observables:
            a, o = arch.axes.index(cells[1]), arch.observables.index(cells[0])
            if not (printed_sig_close(cells[2], arch.slope[a, o], 4)
                    and printed_sig_close(cells[3], arch.slope_stderr[a, o], 2)):
                fail(f"table slope {cells} differs from the archive")
            if arch.fit_chi2 is not None:  # the test of a linear response along the parameter
                chi2, dof = cells[4].split("/") if len(cells) == 6 else ("", "")
                if not (printed_sig_close(chi2, arch.fit_chi2[a, o], 3)
                        and int(dof) == arch.fit_dof[a, o]
                        and printed_sig_close(cells[5], arch.fit_p[a, o], 2)):
                    fail(f"table slope {cells}: chi2/dof or p differs from the archive")
            seen.add(("slope", a, o))
        elif block == "local" and columns and cells[0].isdigit():
            c, lead = int(cells[0]), 1 + len(arch.axes)
            for k, cell in enumerate(cells[lead:]):
                a, o = divmod(k, len(arch.observables))
                value, err = cell.split(" +- ")
                if not (printed_sig_close(value, arch.local_slope[a, c, o], 4)
                        and printed_sig_close(err, arch.local_slope_stderr[a, c, o], 2)):
                    fail(f"table local slope case {c} {columns[lead + k]}: {cell} differs")
                seen.add(("local", a, c, o))
        elif block == "predicted" and columns and cells[0].isdigit():
            c, lead = int(cells[0]), 1 + len(arch.axes)
            for k, cell in enumerate(cells[lead:]):
                p, o = divmod(k, len(arch.observables))
                if columns[lead + k] != f"d{arch.observables[o]}/d{arch.forcings[p]}":
                    fail(f"table predicted column {columns[lead + k]}")
                value, rest = cell.split(" +- ")
                err, _, direct = rest.partition(" [")
                if not (printed_sig_close(value, arch.predicted[p, c, o], 4)
                        and printed_sig_close(err, arch.predicted_stderr[p, c, o], 2)):
                    fail(f"table predicted slope case {c} {columns[lead + k]}: {cell} differs")
                if arch.forcings[p] in arch.axes:  # the direct local slope beside it
                    a = arch.axes.index(arch.forcings[p])
                    if not printed_sig_close(direct.rstrip("]"), arch.local_slope[a, c, o], 4):
                        fail(f"table predicted case {c}: direct slope {cell} differs")
                seen.add(("predicted", p, c, o))
    wanted = {("time", c, n) for c in range(arch.cases) for n in arch.observables}
    wanted |= {("regime", c, n) for c in range(arch.cases) for n in arch.regimes}
    wanted |= {("residence", c, n) for c in range(arch.cases) for n in arch.regimes}
    wanted |= {("errors", c, n) for c in range(arch.cases) for n in arch.observables}
    wanted |= {("slope", a, o) for a in range(len(arch.axes))
               for o in range(len(arch.observables))}
    wanted |= {("snapshot", c, k) for c, rows in arch.snapshots_shown().items()
               for k, *_ in rows}
    if arch.local_slope is not None:
        wanted |= {("local", a, c, o) for a in range(len(arch.axes)) for c in range(arch.cases)
                   for o in range(len(arch.observables))}
    if arch.predicted is not None:
        wanted |= {("predicted", p, c, o) for p in range(len(arch.forcings))
                   for c in range(arch.cases) for o in range(len(arch.observables))}
    if seen != wanted:
        fail(f"table lacks {sorted(wanted - seen)[:5]}")
    print(f"ok: summary table aligned and equal to the archive ({len(seen)} entries)")


# --- README and command line ------------------------------------------------------------------

def check_readme(readme, archive, workdir):
    """Runs the Python blocks of docs/archive.md's section '## The archive' against a real archive
    placed at the paths they name, so the example cannot drift from the archive's layout."""
    with open(readme, encoding="utf-8") as f:
        body = f.read()
    section = body.split("\n## The archive\n", 1)[1].split("\n## ", 1)[0]
    blocks = re.findall(r"```python\n(.*?)```", section, re.S)
    if not blocks or not any("xarray" in b for b in blocks) or not any("h5py" in b for b in blocks):
        fail(f"{readme} '## The archive' has no Python example using xarray and h5py")
    shutil.rmtree(workdir, ignore_errors=True)
    os.makedirs(workdir)
    for code in blocks:
        for path in set(re.findall(r"[\"']([\w./-]+\.h5)[\"']", code)):
            os.makedirs(os.path.join(workdir, os.path.dirname(path)), exist_ok=True)
            target = os.path.join(workdir, path)
            if not os.path.exists(target):
                os.symlink(os.path.abspath(archive), target)
        done = subprocess.run(["/usr/bin/python3", "-c", code], cwd=workdir, capture_output=True,
                              text=True)
        if done.returncode != 0 or not done.stdout.strip():
            fail(f"README example failed:\n{code}\n{done.stderr}")
        print(done.stdout.strip())
    print(f"ok: the README's {len(blocks)} archive example(s) run against {archive}")


def check_cli(plot, workdir):
    """Usage errors exit 2; an archive that cannot be read exits 1 with one line."""
    shutil.rmtree(workdir, ignore_errors=True)
    os.makedirs(workdir)
    done = subprocess.run([plot], capture_output=True, text=True)
    if done.returncode != 2:
        fail(f"no arguments: exit {done.returncode}, expected 2")
    not_hdf5 = os.path.join(workdir, "notes.h5")
    with open(not_hdf5, "w") as f:
        f.write("not an archive\n")
    other = os.path.join(workdir, "other.h5")
    with h5py.File(other, "w") as f:
        f["numbers"] = np.arange(3)
    for path in (os.path.join(workdir, "missing.h5"), not_hdf5, other):
        done = subprocess.run([plot, path, os.path.join(workdir, "out")], capture_output=True,
                              text=True)
        lines = done.stderr.strip().splitlines()
        if done.returncode != 1 or len(lines) != 1 or not lines[0].startswith("plot-archive:"):
            fail(f"{path}: exit {done.returncode}, stderr {done.stderr!r}")
    if os.path.exists(os.path.join(workdir, "out")):
        fail("an output folder was created for an unreadable archive")
    print("ok: usage exits 2, unreadable archives exit 1 with one line")


def check_summary(archive, program):
    """The three formats of `chaosweep summary`."""
    check_summary_json(archive, program)
    check_summary_csv(archive, program)
    check_summary_table(archive, program)


CHECKS = {
    "plot": check_plot,
    "summary": check_summary,
    "later-datasets": check_later_datasets,
    "summary-json": check_summary_json,
    "summary-csv": check_summary_csv,
    "summary-table": check_summary_table,
    "readme": check_readme,
    "cli": check_cli,
}

if __name__ == "__main__":
    CHECKS[sys.argv[1]](*sys.argv[2:])
