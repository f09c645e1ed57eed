#!/usr/bin/python3
"""Per-dataset digests of the archives of a fixed list of campaigns: the guard that keeps every
archive bitwise unchanged while the code that computes and writes it changes.

Usage:
  archive_digests.py --write FILE CHAOSWEEP MPIEXEC [--keep DIR]
  archive_digests.py --check FILE CHAOSWEEP MPIEXEC [--keep DIR | --reuse DIR]

Both modes run every campaign of CAMPAIGNS (specs relative to the project root) under MPIEXEC
into a temporary directory (or DIR, kept) and digest each archive object by object:

  data        SHA-256 of a dataset's type, shape and raw bytes in C order (strings as their
              UTF-8 bytes, each preceded by its length)
  attributes  SHA-256 of an object's attributes: names sorted, each with its type, shape and
              value (dimension-scale references resolved to the paths they point at)

--write stores the digests as JSON (sorted keys). --check compares them with FILE and prints one
line per difference, naming the campaign and the object; it exits 1 on any difference. An object
written now but absent from FILE is a difference unless it is in NEW_DATASETS.
"""
import argparse
import hashlib
import json
import os
import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import h5py
import numpy as np

ROOT = Path(__file__).resolve().parents[2]

# (spec relative to the project root, MPI ranks): every example campaign of configs/ (a file
# there missing from the list is a failure) and test campaigns that together hold every group
# and every optional dataset of the archive, on every model. Every archive is bitwise the same
# on any number of ranks (e2e.*.bitwise_across_ranks), so the rank counts only vary the path.
CAMPAIGNS = [
    # the example campaigns, as users run them
    ("configs/ring-warming-ramp.yaml", 1),
    ("configs/ring-warming-sweep.yaml", 2),
    ("configs/thermosyphon-bias-sweep.yaml", 2),
    ("configs/thermosyphon-lyapunov.yaml", 1),
    ("configs/thermosyphon-noisy-loop.yaml", 2),
    ("configs/thermosyphon-buffeted-loop.yaml", 2),
    ("configs/thermosyphon-bias-switch.yaml", 2),
    ("configs/thermosyphon-ramp-predictability.yaml", 2),
    ("configs/thermosyphon-twins.yaml", 1),
    # regimes, histogram, Lyapunov exponents, trajectories; cases split mid-way across 3 ranks
    ("tests/e2e/specs/l63-small.yaml", 3),
    # a two-axis sweep; twins without regimes; cases settling on fixed points (flagged)
    ("tests/e2e/specs/l63-settling.yaml", 2),
    # Lorenz-84 with exponents and twins, periodic cases flagged non-chaotic
    ("tests/e2e/specs/l84-regimes.yaml", 1),
    # nearest-centroid regimes, uniform perturbations
    ("tests/e2e/specs/l96-small.yaml", 1),
    # a constant schedule without a sweep, with exponents, twins and snapshots
    ("tests/e2e/specs/l63-combo-constant.yaml", 1),
    # a ramp offset by a sweep, every member's trajectory stored
    ("tests/e2e/specs/l63-combo-ramp.yaml", 2),
    # twins that never reach the threshold (NaN horizons)
    ("tests/e2e/specs/l63-twins-far.yaml", 1),
    # no sweep and no optional statistic
    ("tests/figures/specs/ring-single.yaml", 1),
    # a two-axis sweep with regimes, histogram and trajectories
    ("tests/figures/specs/thermosyphon-grid.yaml", 2),
    # the two-scale ring with every statistic and a step schedule
    ("tests/e2e/specs/digests/l96-two-scale.yaml", 2),
    # a periodic schedule from a given initial state, snapshots with regimes
    ("tests/e2e/specs/digests/l63-periodic.yaml", 1),
    # members that become non-finite
    ("tests/e2e/specs/digests/l63-blowup.yaml", 2),
]

# Root attributes left out of the digest of "/", each for its reason.
EXCLUDED_ROOT_ATTRIBUTES = {
    "created_utc": "the wall-clock time the archive was written: differs on every run",
    "ranks": "the MPI ranks of the run: the numbers do not depend on it, the attribute does",
    "format_version": "the archive format's version: a deliberate layout change raises it",
}

# Datasets an archive may hold that the stored digests may lack: the members' extremes.
NEW_DATASETS = frozenset({
    "/member/extreme_min",
    "/member/extreme_max",
    "/member/extreme_min_time",
    "/member/extreme_max_time",
})


def length_prefixed(data):
    return len(data).to_bytes(8, "little") + data


def type_name(dtype):
    """A dtype in words that survive JSON and h5py versions: numpy's code (byte order, kind,
    size) for numbers, the encoding and length for strings, the fields for compounds."""
    string = h5py.check_string_dtype(dtype)
    if string is not None:
        length = "variable" if string.length is None else str(string.length)
        return f"string({string.encoding}, {length})"
    if h5py.check_vlen_dtype(dtype) is not None:
        return f"vlen({type_name(h5py.check_vlen_dtype(dtype))})"
    if h5py.check_ref_dtype(dtype) is not None:
        return "reference"
    if dtype.names:
        return "compound(" + ", ".join(f"{n}: {type_name(dtype[n])}" for n in dtype.names) + ")"
    return dtype.str


def object_path(reference, f):
    """The path of the object a reference points at ("" for an object no longer linked)."""
    return f[reference].name or ""


def encode(value, f):
    """Bytes that stand for a value read by h5py: numbers as their raw bytes, strings as their
    UTF-8 bytes, object references as the path of the object they point at."""
    if isinstance(value, h5py.Reference):
        return b"ref:" + length_prefixed(object_path(value, f).encode())
    if isinstance(value, str):  # h5py returns some strings decoded, others as bytes
        value = value.encode("utf-8")
    if isinstance(value, bytes):
        return b"text:" + length_prefixed(value)
    if isinstance(value, np.void) and value.dtype.names:
        return b"record:" + b"".join(encode(value[n], f) for n in value.dtype.names)
    value = np.asarray(value)
    header = f"{type_name(value.dtype)} {value.shape}:".encode()
    if value.dtype.kind == "O" or value.dtype.names:
        return header + b"".join(encode(v, f) for v in value.ravel(order="C"))
    return header + np.ascontiguousarray(value).tobytes()


def reference_list(value, f):
    """A dimension scale's REFERENCE_LIST as sorted (dataset path, axis) pairs, leaving out the
    datasets of NEW_DATASETS. HDF5 keeps the records in the order the datasets were attached, a
    detail of the writing order that no reader sees."""
    pairs = {(object_path(record["dataset"], f), int(record["dimension"])) for record in value}
    return sorted(p for p in pairs if p[0] not in NEW_DATASETS)


def attributes_digest(obj, f):
    hash = hashlib.sha256()
    for name in sorted(obj.attrs):
        if obj.name == "/" and name in EXCLUDED_ROOT_ATTRIBUTES:
            continue
        attribute = h5py.h5a.open(obj.id, name.encode())
        value, shape = obj.attrs[name], attribute.shape
        if name == "REFERENCE_LIST":
            value = reference_list(value, f)
            shape = (len(value),)
            value = repr(value)
        hash.update(length_prefixed(name.encode()))
        hash.update(length_prefixed(f"{type_name(attribute.dtype)} {shape}".encode()))
        hash.update(length_prefixed(encode(value, f)))
    return hash.hexdigest()


def data_digest(dataset, f):
    hash = hashlib.sha256(f"{type_name(dataset.dtype)} {dataset.shape}\n".encode())
    hash.update(encode(dataset[()], f))
    return hash.hexdigest()


def archive_digests(path):
    """{object path: {"attributes": digest[, "data": digest]}} over the root, every group and
    every dataset of the archive."""
    out = {}
    with h5py.File(path, "r") as f:
        def visit(name, obj):
            entry = {"attributes": attributes_digest(obj, f)}
            if isinstance(obj, h5py.Dataset):
                entry["data"] = data_digest(obj, f)
            out[obj.name] = entry
        visit("/", f)
        f.visititems(visit)
    return out


def archive_name(spec):
    return spec.replace("/", "_").removesuffix(".yaml") + ".h5"


def run_campaigns(program, mpiexec, workdir):
    """Runs every campaign; returns {spec: digests} and {spec: the run's error line}."""
    digests, errors = {}, {}
    for spec, ranks in CAMPAIGNS:
        archive = Path(workdir) / archive_name(spec)
        started = time.monotonic()
        run = subprocess.run([mpiexec, "-n", str(ranks), "--oversubscribe", program, "run",
                              str(ROOT / spec), "--archive", str(archive), "--overwrite",
                              "--progress", "none"], capture_output=True, text=True)
        seconds = time.monotonic() - started
        if run.returncode != 0:
            lines = (run.stderr or run.stdout).strip().splitlines() or ["no output"]
            errors[spec] = f"exit {run.returncode}: {lines[-1]}"
            continue
        try:
            digests[spec] = archive_digests(archive)
        except (OSError, KeyError, ValueError) as e:
            errors[spec] = f"cannot read {archive}: {e}"
            continue
        print(f"ran {spec} on {ranks} rank(s) in {seconds:.1f} s: {len(digests[spec])} objects",
              flush=True)
    return digests, errors


def unlisted_configs():
    """A line for each example campaign of configs/ that CAMPAIGNS lacks."""
    listed = {spec for spec, _ in CAMPAIGNS}
    configs = sorted(str(p.relative_to(ROOT)) for p in ROOT.glob("configs/*.yaml"))
    return [f"{spec}: an example campaign missing from CAMPAIGNS" for spec in configs
            if spec not in listed]


def differences(stored, now, errors):
    """One line per difference between the stored digests and those of this run."""
    lines = unlisted_configs()
    for spec in sorted(set(stored) | set(now) | set(errors)):
        if spec in errors:
            lines.append(f"{spec}: the run failed ({errors[spec]})")
            continue
        if spec not in now:
            lines.append(f"{spec}: stored but no longer in the list of campaigns")
            continue
        if spec not in stored:
            lines.append(f"{spec}: not in the stored digests (regenerate them with --write)")
            continue
        old, new = stored[spec], now[spec]
        for path in sorted(set(old) | set(new)):
            if path not in new:
                lines.append(f"{spec} {path}: stored, no longer written")
            elif path not in old:
                if path not in NEW_DATASETS:
                    lines.append(f"{spec} {path}: written, absent from the stored digests")
            else:
                for part in ("data", "attributes"):
                    if old[path].get(part) != new[path].get(part):
                        lines.append(f"{spec} {path}: {part} differ")
    return lines


MACHINE_KEY = "__machine__"
SKIPPED = 77  # the ctest's SKIP_RETURN_CODE
# CPU features that change how the default build (-march=native) rounds: fused multiply-add and
# the vector widths the compiler may use, and the C library whose exp/log the models call.
ROUNDING_FLAGS = ("fma", "avx2", "avx512f")


def machine_signature():
    """What the stored digests depend on besides the code: architecture, CPU features, libc."""
    flags = set()
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as f:
            for line in f:
                if line.startswith("flags"):
                    flags = set(line.split(":", 1)[1].split())
                    break
    except OSError:
        pass
    libc = os.confstr("CS_GNU_LIBC_VERSION") if hasattr(os, "confstr") else "unknown"
    have = ",".join(flag for flag in ROUNDING_FLAGS if flag in flags) or "none"
    return f"{platform.machine()} [{have}] {libc}"


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    mode = parser.add_mutually_exclusive_group(required=True)
    mode.add_argument("--write", metavar="FILE", help="store the digests in FILE")
    mode.add_argument("--check", metavar="FILE", help="compare the digests with FILE")
    parser.add_argument("chaosweep", help="the chaosweep program")
    parser.add_argument("mpiexec", help="the MPI launcher")
    parser.add_argument("--keep", metavar="DIR", help="write the archives into DIR and keep them")
    parser.add_argument("--reuse", metavar="DIR",
                        help="digest the archives an earlier --keep left in DIR, running nothing")
    args = parser.parse_args()
    if args.reuse and (args.write or args.keep):
        parser.error("--reuse goes with --check alone")

    started = time.monotonic()
    if args.reuse:
        now = {spec: archive_digests(Path(args.reuse) / archive_name(spec))
               for spec, _ in CAMPAIGNS}
        errors = {}
    else:
        with tempfile.TemporaryDirectory(prefix="archive-digests-") as scratch:
            workdir = args.keep or scratch
            os.makedirs(workdir, exist_ok=True)
            now, errors = run_campaigns(args.chaosweep, args.mpiexec, workdir)
    seconds = time.monotonic() - started
    objects = sum(len(d) for d in now.values())
    datasets = sum(1 for d in now.values() for e in d.values() if "data" in e)
    summary = (f"{len(now)} campaigns, {objects} objects ({datasets} datasets) "
               f"in {seconds:.1f} s")

    if args.write:
        lines = unlisted_configs() + [f"{spec}: the run failed ({error})"
                                      for spec, error in sorted(errors.items())]
        if lines:
            print("\n".join(lines))
            sys.exit(1)
        with open(args.write, "w", encoding="utf-8") as out:
            json.dump({MACHINE_KEY: machine_signature(), **now}, out, indent=2, sort_keys=True)
            out.write("\n")
        print(f"wrote {args.write}: {summary}")
        return

    with open(args.check, encoding="utf-8") as f:
        stored = json.load(f)
    made_on = stored.pop(MACHINE_KEY, None)
    if made_on != machine_signature():
        # Another CPU or C library may round differently: the digests say nothing here.
        print(f"skipped: the digests were made on {made_on}, this machine is "
              f"{machine_signature()}; regenerate them at the base commit (DEVELOPERS.md)")
        sys.exit(SKIPPED)
    lines = differences(stored, now, errors)
    for line in lines:
        print("DIFFERS: " + line)
    if lines:
        print(f"{len(lines)} difference(s) from {args.check}; {summary}")
        sys.exit(1)
    print(f"ok: every archive matches {args.check}: {summary}")


if __name__ == "__main__":
    main()
