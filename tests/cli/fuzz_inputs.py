"""fuzz_inputs.py - the bounded fuzz test of twingyre's inputs (run by
test_fuzz.sh, which makes the base files first).

From a fixed seed it makes CASES mutated inputs and runs the program on each:
  config   a mutated small33.ini: `describe`, then a short `run` (grid, step
           and duration pinned by --set so that no case is long)
  sweep    a mutated sweep file: `sweep --slurm-script` (parses and checks
           every member; runs none)
  netcdf   a checkpoint.nc, fields.nc or subgrid.nc cut short, with flipped
           bytes (in the data of a checksummed variable, in the header, or
           anywhere) or with bytes appended: `run` from it, or `fit` on it
A case fails on a crash (a signal, or an exit status above 9), a sanitizer
report on stderr, a hang (no exit within TIMEOUT seconds) or exit 0 on input
known to be damaged (a file cut short; a flipped byte in a checksummed
variable's data). Mutation fuzzing of this kind: common practice.

usage: fuzz_inputs.py TWINGYRE BASE_DIR WORK_DIR CASES SEED TIMEOUT [ONLY]
BASE_DIR holds small33.ini, checkpoint.nc, fields.nc, subgrid.nc, base.ini
and sweep.ini. ONLY (a case index) reruns one case. Prints one line per
failing case and a summary line; exits 1 when a case failed.

Part of twingyre. GPL-3.0-or-later.
"""
import os
import random
import shutil
import subprocess
import sys

TOKENS = ["nan", "-nan", "inf", "-inf", "1e308", "-1e308", "1e-300", "-1e-300", "0", "-0",
          "-1", "65537", "1.8e19", "9223372036854775808", "2.5", "", " ", "abc", "0x10",
          "1,2,3,4,5,6,7", ",,,", "1e", "--1", "x" * 300, "4097", "17", "rest", "noise",
          "/etc/passwd", "/dev/zero", ".", "periodic", "none", "viscosity", "coefficients",
          "stochastic_additive", "\u00e9", "1 2"]
SANITIZER_MARKS = ("AddressSanitizer", "LeakSanitizer", "UndefinedBehaviorSanitizer",
                   "runtime error:")


def mutate_text(rng, text):
    """One to three random edits of an INI text (bytes)."""
    lines = text.split(b"\n")
    for _ in range(rng.randint(1, 3)):
        op = rng.randrange(9)
        i = rng.randrange(len(lines)) if lines else 0
        if op == 0 or op == 1:          # a key's value -> a strange token
            keyed = [k for k, l in enumerate(lines) if b"=" in l and not l.startswith(b";")]
            if keyed:
                k = rng.choice(keyed)
                key = lines[k].split(b"=", 1)[0]
                lines[k] = key + b"= " + rng.choice(TOKENS).encode()
        elif op == 2 and lines:         # delete a line
            del lines[i]
        elif op == 3 and lines:         # duplicate a line
            lines.insert(i, lines[i])
        elif op == 4:                   # random bytes, NUL and high bytes included
            junk = bytes(rng.choice([0, 0xff, 0x5b, 0x5d, 0x3d, 0x0d, 0x09, 0x41])
                         for _ in range(rng.randint(1, 4)))
            line = lines[i] if lines else b""
            p = rng.randint(0, len(line))
            lines[i:i + 1] = [line[:p] + junk + line[p:]]
        elif op == 5:                   # cut the text
            return b"\n".join(lines)[:rng.randint(0, len(b"\n".join(lines)))]
        elif op == 6:                   # a section header with trailing text, or garbage
            lines.insert(i, rng.choice([b"[grid] trailing", b"[", b"[]", b"[closure]",
                                        b"[twin.coarse]", b"[nosuch]", b"[vary]"]))
        elif op == 7:                   # an unknown or misplaced key
            lines.insert(i, rng.choice([b"bogus = 1", b"points = 33", b"use = ,,,",
                                        b"twin.coarse.grid.points = nan", b"= 3", b"seeds = 7"]))
        else:                           # a long line
            lines.insert(i, b"; " + b"y" * rng.randint(150, 400))
    return b"\n".join(lines)


def mutate_nc(rng, data):
    """(new bytes, kind, known damaged?) for a NetCDF file's bytes."""
    op = rng.randrange(5)
    size = len(data)
    if op == 0:                         # cut short: always damaged
        return data[:rng.randrange(size)], "cut", True
    buf = bytearray(data)
    if op == 1:                         # a flipped bit in the last 64 bytes: the data of the
        p = size - 1 - rng.randrange(64)  # last variable, checksummed in checkpoints/subgrid
        buf[p] ^= 1 << rng.randrange(8)
        return bytes(buf), "flip-tail", None
    if op == 2:                         # header bytes
        for _ in range(rng.randint(1, 3)):
            buf[rng.randrange(min(size, 2048))] = rng.randrange(256)
        return bytes(buf), "flip-header", False
    if op == 3:                         # any bytes
        for _ in range(rng.randint(1, 8)):
            buf[rng.randrange(size)] = rng.randrange(256)
        return bytes(buf), "flip-any", False
    return data + bytes(rng.randrange(256) for _ in range(rng.randint(1, 64))), "grow", False


def run(cmd, timeout, cwd):
    try:
        p = subprocess.run(cmd, cwd=cwd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                           stdin=subprocess.DEVNULL, timeout=timeout)
    except subprocess.TimeoutExpired:
        return None, ""
    return p.returncode, p.stderr.decode("utf-8", "replace")


def judge(status, err, damaged):
    """'' when fine, else what went wrong."""
    if status is None:
        return "hang (no exit within the time limit)"
    if status < 0 or status > 9:
        return "crash (status %d)" % status
    for m in SANITIZER_MARKS:
        if m in err:
            return "sanitizer report: " + err[err.index(m):][:300].replace("\n", " | ")
    if damaged and status == 0:
        return "exit 0 on damaged input"
    return ""


def case(i, rng, prog, base, work, timeout):
    """Runs case i; returns (kind, failure text or '')."""
    d = os.path.join(work, "case%d" % i)
    shutil.rmtree(d, ignore_errors=True)
    os.makedirs(d)
    kind = rng.choices(["config", "netcdf", "sweep"], weights=[4, 4, 2])[0]
    bad = ""
    if kind == "config":
        with open(os.path.join(base, "small33.ini"), "rb") as f:
            text = mutate_text(rng, f.read())
        cfg = os.path.join(d, "c.ini")
        with open(cfg, "wb") as f:
            f.write(text)
        s, e = run([prog, "describe", cfg], timeout, d)
        bad = judge(s, e, False)
        if not bad:
            s, e = run([prog, "run", cfg, "--out", os.path.join(d, "out"), "--quiet",
                        "--set", "grid.points=33", "--set", "time.step_s=3600",
                        "--set", "time.duration_days=0.25",
                        "--set", "output.snapshot_every_days=0.125",
                        "--set", "output.checkpoint_every_days=0"], timeout, d)
            bad = judge(s, e, False)
    elif kind == "sweep":
        shutil.copy(os.path.join(base, "base.ini"), d)
        with open(os.path.join(base, "sweep.ini"), "rb") as f:
            text = mutate_text(rng, f.read())
        sw = os.path.join(d, "s.ini")
        with open(sw, "wb") as f:
            f.write(text)
        s, e = run([prog, "sweep", sw, "--out", os.path.join(d, "out"), "--quiet",
                    "--slurm-script", os.path.join(d, "job.sh")], timeout, d)
        bad = judge(s, e, False)
    else:
        name = rng.choice(["checkpoint.nc", "fields.nc", "subgrid.nc"])
        with open(os.path.join(base, name), "rb") as f:
            data, how, damaged = mutate_nc(rng, f.read())
        if damaged is None:             # a flip in checksummed data is damage
            damaged = name != "fields.nc"
        path = os.path.join(d, name)
        with open(path, "wb") as f:
            f.write(data)
        if name == "subgrid.nc":
            cmd = [prog, "fit", path, "--out", os.path.join(d, "c.txt")]
        else:
            cmd = [prog, "run", os.path.join(base, "small33.ini"), "--out",
                   os.path.join(d, "out"), "--quiet", "--set", "initial.state=" + path,
                   "--set", "time.duration_days=11"]
        s, e = run(cmd, timeout, d)
        bad = judge(s, e, damaged)
        kind = "netcdf %s %s" % (name, how)
    if not bad:
        shutil.rmtree(d, ignore_errors=True)
    return kind, bad


def main():
    prog, base, work, ncases, seed, timeout = sys.argv[1:7]
    only = int(sys.argv[7]) if len(sys.argv) > 7 else None
    ncases, seed, timeout = int(ncases), int(seed), float(timeout)
    failed = 0
    counts = {}
    for i in range(ncases):
        rng = random.Random(seed * 1000003 + i)  # each case reproducible alone
        if only is not None and i != only:
            continue
        kind, bad = case(i, rng, prog, base, work, timeout)
        counts[kind.split()[0]] = counts.get(kind.split()[0], 0) + 1
        if bad:
            failed += 1
            print("FAIL - fuzz case %d (%s; seed %d; inputs kept in %s): %s"
                  % (i, kind, seed, os.path.join(work, "case%d" % i), bad))
    print("fuzz: %d cases (%s), %d failed"
          % (sum(counts.values()), ", ".join("%s %d" % kv for kv in sorted(counts.items())),
             failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
