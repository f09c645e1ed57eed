#!/usr/bin/env python3
"""Reads, checks and damages segment files of finished batches (done/segment-RRRRR.ckpt).

The record layout is read from its description in src/checkpoint/segment.hpp, and every
checksum is recomputed here with hashlib, independently of chaosweep:

    offset  size
         0     8  magic b"CWSEGREC"
         8     4  u32 format version (3)
        12     4  u32 zero
        16     8  i64 batch index
        24     8  u64 payload length L
        32    64  the spec's SHA-256, hex
        96    64  SHA-256 of the payload, hex
       160    64  SHA-256 of bytes [0, 160), hex
       224     L  payload

Usage:
    damage_segment.py check SEGMENT... [--batches N]
        every record sound (both checksums), records back to back up to the end of the file;
        with --batches, every batch 0..N-1 present in the segments together
    damage_segment.py payload SEGMENT N|all   flip a byte in the middle of record N's payload
    damage_segment.py header SEGMENT N        flip a byte of record N's batch index
    damage_segment.py cut SEGMENT             truncate the file in the middle of its last record
Records are numbered from 0 in file order. Each command prints what it found or did; the
damaging ones first check the whole segment, so they never damage a file already unsound.
"""
import argparse
import hashlib
import struct
import sys

MAGIC = b"CWSEGREC"
HEADER = 224


class Unsound(Exception):
    pass


def records(path):
    """(offset, batch, payload length) of every record; raises Unsound on any defect."""
    data = open(path, "rb").read()
    found, at = [], 0
    while at < len(data):
        header = data[at:at + HEADER]
        if len(header) < HEADER or header[:8] != MAGIC:
            raise Unsound(f"{path}: no record header at byte {at}")
        version, zero, batch, length = struct.unpack_from("<IIqQ", header, 8)
        if hashlib.sha256(header[:160]).hexdigest().encode() != header[160:224]:
            raise Unsound(f"{path}: header checksum wrong at byte {at}")
        if version != 3 or zero != 0:
            raise Unsound(f"{path}: version {version}, reserved {zero} at byte {at}")
        payload = data[at + HEADER:at + HEADER + length]
        if len(payload) != length:
            raise Unsound(f"{path}: record at byte {at} cut short")
        if hashlib.sha256(payload).hexdigest().encode() != header[96:160]:
            raise Unsound(f"{path}: payload checksum wrong in the record at byte {at}")
        found.append((at, batch, length))
        at += HEADER + length
    return found


def flip(path, offset):
    with open(path, "r+b") as f:
        f.seek(offset)
        byte = f.read(1)[0]
        f.seek(offset)
        f.write(bytes([byte ^ 0x5A]))


def check(paths, batches):
    present = set()
    for path in paths:
        found = records(path)
        present.update(b for _, b, _ in found)
        print(f"{path}: {len(found)} sound records")
    missing = sorted(set(range(batches or 0)) - present)
    if missing:
        raise Unsound(f"batches missing from the segments: {missing}")


def damage(command, path, which):
    found = records(path)
    if command == "cut":
        at, batch, length = found[-1]
        size = at + HEADER + length // 2
        with open(path, "r+b") as f:
            f.truncate(size)
        print(f"{path}: last record (batch {batch}, at byte {at}) cut to end at byte {size}")
        return
    for n in range(len(found)) if which == "all" else [int(which)]:
        at, batch, length = found[n]
        if command == "payload":
            flip(path, at + HEADER + length // 2)
        else:
            flip(path, at + 16)
        print(f"{path}: {command} of record {n} (batch {batch}, at byte {at}) damaged")


def main():
    parser = argparse.ArgumentParser(description="check and damage chaosweep segment files")
    sub = parser.add_subparsers(dest="command", required=True)
    p = sub.add_parser("check")
    p.add_argument("segments", nargs="+")
    p.add_argument("--batches", type=int)
    for name in ("payload", "header"):
        p = sub.add_parser(name)
        p.add_argument("segment")
        p.add_argument("record", help="record number from 0, or all")
    sub.add_parser("cut").add_argument("segment")
    args = parser.parse_args()
    if args.command == "check":
        check(args.segments, args.batches)
    else:
        damage(args.command, args.segment, getattr(args, "record", None))


if __name__ == "__main__":
    try:
        main()
    except (Unsound, IndexError, ValueError) as e:
        sys.exit(f"damage_segment.py: {e}")
