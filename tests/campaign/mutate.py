#!/usr/bin/python3
"""A seeded mutation campaign against the scenario reader and the preflight.

Takes the shipped scenarios (protocols/*.toml, the demo among them, and `heraldry example`),
applies seeded mutations to them (values: huge, tiny, negative, zero, NaN-like strings, wrong
types; keys: deleted, renamed, duplicated, moved; structure: tables turned into arrays, extra
nesting, truncation, stray bytes) and runs `heraldry check` on every mutant and `heraldry run`
on a bounded subset that check accepts (mutants of tiny-grid variants: few points, a low
max_cutoff, a loose tolerance; half of these mutants move one number to the edge of its domain,
so that many pass check and reach the kernels). It fails when any command

- ends with an exit code outside 0 (ok), 2 (input error) and 3 (a budget missed), or by a
  signal, or does not end within the time limit (a hang);
- exits 2 with a message that names neither a key (key '...') nor the scenario file;
- prints NaN or an infinity in a figure (check: any line after the first).

Usage: mutate.py HERALDRY SOURCE_DIR SCRATCH [--mutants N] [--runs N] [--seed S] [--jobs J]
The seed defaults to 16 (HERALDRY_CAMPAIGN_SEED overrides it); each failure prints the
mutant's file, which is kept in SCRATCH/failures/.
"""
import argparse
import concurrent.futures
import os
import random
import re
import shutil
import subprocess
import sys

HUGE_TINY = ["1e308", "-1e308", "1.7976931348623157e308", "5e-324", "-5e-324", "1e-300", "1e300", "0", "0.0", "-0.0",
             "-1", "-1e-9", "1e6", "1e7", "1e9", "1e12", "1e18", "3e-9", "0.999999999999", "1.000000000001", "400", "401",
             "2147483647", "-2147483648", "9223372036854775807", "-9223372036854775808", "4294967296"]
NAN_LIKE = ["nan", "+nan", "-nan", "inf", "-inf", "+inf", '"nan"', '"inf"', '"1e308"', '"NaN"', '"0x10"', "0x7fffffff",
            "0o777", "0b1", "1_000", '""', '"  "', "'single'"]
WRONG_TYPES = ["true", "false", "[]", "{}", "[1, 2]", "[[1]]", "{ from = 1 }", '"text"', "1979-05-27T07:32:00Z",
               "07:32:00", "[true, false]", '{ tune = [1, 0] }', '{ tune = [0, 1] }', "{ from = 1, to = 0, points = 3 }",
               "{ from = 0, to = 1e308, points = 1000000 }", "{ from = 5e-324, to = 1, points = 3, scale = \"log\" }",
               "[nan]", "[1e308, -1e308]"]
ALL_VALUES = HUGE_TINY + NAN_LIKE + WRONG_TYPES

NUMBER = re.compile(r"(?<![\w.\"-])[-+]?(?:\d+\.?\d*(?:[eE][-+]?\d+)?|\.\d+)(?![\w.\"])")
ASSIGN = re.compile(r"^(\s*)([A-Za-z0-9_\-]+)(\s*=\s*)(.*)$")
INLINE_KEY = re.compile(r"([{,]\s*)([A-Za-z0-9_\-]+)(\s*=\s*)")
HEADER = re.compile(r"^\s*\[\[?([^\]]+)\]\]?\s*$")
STRING = re.compile(r'"[^"\n]*"')


def strip_comments(text):
    """Comments dropped, so that mutations land on what the reader sees."""
    out = []
    for line in text.split("\n"):
        quote = None
        for j, ch in enumerate(line):
            if quote:
                if ch == quote:
                    quote = None
            elif ch in "\"'":
                quote = ch
            elif ch == "#":
                line = line[:j].rstrip()
                break
        if line.strip() or not out or out[-1].strip():
            out.append(line)
    return "\n".join(out)


def tiny(text):
    """A variant with a small grid and a low cutoff bound: cheap to run."""
    t = re.sub(r"points\s*=\s*\d+", "points = 2", text)
    t = re.sub(r"tolerance\s*=\s*[0-9.eE+-]+", "tolerance = 1e-4", t)
    t = re.sub(r"^cutoff\s*=\s*\d+", "cutoff = 12", t, flags=re.M)
    t = re.sub(r"^max_cutoff\s*=\s*\d+\s*$", "", t, flags=re.M)
    if re.search(r"^\[numerics\]\s*$", t, flags=re.M):
        t = re.sub(r"^\[numerics\]\s*$", "[numerics]\nmax_cutoff = 30", t, count=1, flags=re.M)
    else:
        t += "\n[numerics]\nmax_cutoff = 30\n"
    return t


# ------------------------------------------------------------------------------ mutations

def m_number(rng, lines):
    spots = [(i, m) for i, l in enumerate(lines) if not l.lstrip().startswith("title") for m in NUMBER.finditer(l)]
    if not spots:
        return False
    i, m = rng.choice(spots)
    pool = rng.choice([HUGE_TINY, NAN_LIKE, WRONG_TYPES])
    lines[i] = lines[i][:m.start()] + rng.choice(pool) + lines[i][m.end():]
    return True


def m_value(rng, lines):
    spots = [i for i, l in enumerate(lines) if ASSIGN.match(l)]
    if not spots:
        return False
    i = rng.choice(spots)
    ind, key, eq, _ = ASSIGN.match(lines[i]).groups()
    lines[i] = ind + key + eq + rng.choice(ALL_VALUES)
    return True


def m_string(rng, lines):
    spots = [(i, m) for i, l in enumerate(lines) for m in STRING.finditer(l)]
    if not spots:
        return False
    i, m = rng.choice(spots)
    repl = rng.choice(['"a/b"', '"a_b"', '""', '"."', '".."', '"bare"', '"auto"', '"AIR"', '"b"', '"a"', '"c"', "1",
                       '"' + "x" * 300 + '"', '"\\u00e9"', '"\\u0000"', '"tap b"', '"lab"', '"dense"', '"log"'])
    lines[i] = lines[i][:m.start()] + repl + lines[i][m.end():]
    return True


def m_delete_key(rng, lines):
    spots = [i for i, l in enumerate(lines) if ASSIGN.match(l) or HEADER.match(l)]
    if not spots:
        return False
    del lines[rng.choice(spots)]
    return True


def rename(rng, key):
    kind = rng.randrange(5)
    if kind == 0:
        return key + rng.choice(["s", "_x", "2"])
    if kind == 1 and len(key) > 2:
        j = rng.randrange(len(key) - 1)
        return key[:j] + key[j + 1] + key[j] + key[j + 2:]
    if kind == 2:
        return key.upper()
    if kind == 3:
        return key[:-1] if len(key) > 1 else key + "x"
    return rng.choice(["name", "steps", "kind", "counter", "link", "tune", "from", "to", "points", "scale", "file",
                       "medium", "model", "a", "b"])


def m_rename_key(rng, lines):
    spots = [(i, None) for i, l in enumerate(lines) if ASSIGN.match(l)]
    spots += [(i, m) for i, l in enumerate(lines) for m in INLINE_KEY.finditer(l)]
    if not spots:
        return False
    i, m = rng.choice(spots)
    if m is None:
        ind, key, eq, val = ASSIGN.match(lines[i]).groups()
        lines[i] = ind + rename(rng, key) + eq + val
    else:
        lines[i] = lines[i][:m.start(2)] + rename(rng, m.group(2)) + lines[i][m.end(2):]
    return True


def m_duplicate(rng, lines):
    spots = [i for i, l in enumerate(lines) if ASSIGN.match(l) or HEADER.match(l)]
    if not spots:
        return False
    i = rng.choice(spots)
    lines.insert(i + 1, lines[i])
    return True


def m_move(rng, lines):
    spots = [i for i, l in enumerate(lines) if ASSIGN.match(l)]
    if len(spots) < 2:
        return False
    i = rng.choice(spots)
    line = lines.pop(i)
    lines.insert(rng.randrange(len(lines) + 1), line)
    return True


def m_header(rng, lines):
    spots = [i for i, l in enumerate(lines) if HEADER.match(l)]
    if not spots:
        return False
    i = rng.choice(spots)
    name = HEADER.match(lines[i]).group(1)
    lines[i] = rng.choice(["[[" + name + "]]", "[" + name + "]", "[" + name + ".x]", "[" + name + ".air]",
                           "[" + rename(rng, name) + "]", name + " = []", "[" + name + "]]"])
    return True


def m_nest(rng, lines):
    spots = [i for i, l in enumerate(lines) if ASSIGN.match(l)]
    if not spots:
        return False
    i = rng.choice(spots)
    ind, key, eq, val = ASSIGN.match(lines[i]).groups()
    depth = rng.choice([1, 2, 3, 40, 2000])
    shape = rng.randrange(3)
    if shape == 0:
        val = "[" * depth + val + "]" * depth
    elif shape == 1:
        val = "{ x = " * depth + val + " }" * depth
    else:
        val = "{ from = " + val + ", to = " + val + ", points = 2 }"
    lines[i] = ind + key + eq + val
    return True


def m_truncate(rng, text):
    return text[: rng.randrange(len(text) + 1)]


def m_bytes(rng, text):
    at = rng.randrange(len(text) + 1)
    junk = rng.choice(["\x00", "\xff", "\u00e9", "\u2028", "\r", "\t", "\\", "\"", "'", "]", "[", "{", "}", "=", ",",
                       "\ufeff", "\U0001f600", "\x7f", "\x1b[2J"])
    return text[:at] + junk + text[at:]


LINE_MUTATIONS = [m_number, m_number, m_number, m_value, m_value, m_string, m_delete_key, m_rename_key,
                  m_duplicate, m_move, m_header, m_nest]
TEXT_MUTATIONS = [m_truncate, m_bytes]


# Values near the edges of legal domains: mutants that check often accepts, so that the run
# subset reaches the kernels with them.
EDGE_VALUES = ["0", "0.0", "1", "1.0", "0.5", "2", "1e-9", "1e-12", "1e-300", "5e-324", "0.999999999", "0.9999999999999999",
               "1e3", "1e4", "1e6", "1e7", "150", "300", "1000", "0.01", "1e-3", "12", "29.999"]


def m_edge_number(rng, lines):
    spots = [(i, m) for i, l in enumerate(lines) if not l.lstrip().startswith("title") for m in NUMBER.finditer(l)]
    if not spots:
        return False
    i, m = rng.choice(spots)
    lines[i] = lines[i][:m.start()] + rng.choice(EDGE_VALUES) + lines[i][m.end():]
    return True


def mutate(rng, text, gentle=False):
    if gentle:
        lines = text.split("\n")
        m_edge_number(rng, lines)
        return "\n".join(lines), ["m_edge_number"]
    applied = []
    for _ in range(rng.choice([1, 1, 1, 2, 2, 3])):
        if rng.random() < 0.12:
            f = rng.choice(TEXT_MUTATIONS)
            text = f(rng, text)
            applied.append(f.__name__)
        else:
            lines = text.split("\n")
            f = rng.choice(LINE_MUTATIONS)
            if f(rng, lines):
                applied.append(f.__name__)
            text = "\n".join(lines)
    return text, applied


# ------------------------------------------------------------------------------- checking

NAN_INF = re.compile(r"(?<![\w\"'])-?(nan|inf)(?![\w\"'])", re.I)


def judge(cmd_name, path, proc, timed_out):
    """A list of what is wrong with one command's outcome (empty: fine)."""
    out = (proc.stdout or "") + (proc.stderr or "") if proc else ""
    if timed_out:
        return [f"{cmd_name} did not end within the time limit (a hang?)"]
    rc = proc.returncode
    if rc < 0:
        return [f"{cmd_name} ended by signal {-rc}"]
    if rc not in (0, 2, 3):
        return [f"{cmd_name} exited {rc}: {out.strip()[-400:]}"]
    bad = []
    if rc == 2:
        err = proc.stderr
        if "key '" not in err and path not in err:
            bad.append(f"{cmd_name} exit 2 names neither a key nor the file: {err.strip()[:400]}")
        if "key '<input>" in err or "<input>:" in err:
            bad.append(f"{cmd_name} exit 2 names an internal place: {err.strip()[:400]}")
    elif cmd_name == "check":
        # Lines with quotes hold the user's own names (a protocol may be called "N = inf").
        for line in proc.stdout.split("\n")[1:]:
            if '"' not in line and NAN_INF.search(line):
                bad.append(f"check printed NaN or infinity: {line.strip()}")
    return bad


def run_cmd(args, limit):
    env = dict(os.environ, OMP_NUM_THREADS="1")
    try:
        p = subprocess.run(args, capture_output=True, text=True, errors="replace", timeout=limit, env=env)
        return p, False
    except subprocess.TimeoutExpired:
        return None, True


def check_one(heraldry, path, limit):
    p, timed_out = run_cmd([heraldry, "check", path], limit)
    return p, timed_out, judge("check", path, p, timed_out)


def run_one(heraldry, path, out, limit):
    p, timed_out = run_cmd([heraldry, "run", path, "-o", out, "--threads", "1"], limit)
    bad = judge("run", path, p, timed_out)
    if not bad and p.returncode in (0, 3) and not os.path.exists(out):
        bad.append("run exited %d without its result file" % p.returncode)
    return p, bad


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("heraldry")
    ap.add_argument("source")
    ap.add_argument("scratch")
    ap.add_argument("--mutants", type=int, default=1200)
    ap.add_argument("--runs", type=int, default=40)
    ap.add_argument("--seed", type=int, default=int(os.environ.get("HERALDRY_CAMPAIGN_SEED", "16")))
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--limit", type=float, default=120.0, help="seconds before a command counts as hung")
    a = ap.parse_args()

    shutil.rmtree(a.scratch, ignore_errors=True)
    os.makedirs(os.path.join(a.scratch, "mutants"))
    os.makedirs(os.path.join(a.scratch, "failures"))
    os.makedirs(os.path.join(a.scratch, "out"))
    bases = {}
    pdir = os.path.join(a.source, "protocols")
    for name in sorted(os.listdir(pdir)):
        if name.endswith(".toml"):
            with open(os.path.join(pdir, name), encoding="utf-8") as f:
                bases[name[:-5]] = strip_comments(f.read())
    example = subprocess.run([a.heraldry, "example"], capture_output=True, text=True, check=True).stdout
    bases["example"] = strip_comments(example)
    for k in list(bases):
        bases[k + "_tiny"] = tiny(bases[k])

    rng = random.Random(a.seed)
    names = sorted(bases)
    mutants = []
    for i in range(a.mutants):
        base = names[i % len(names)]
        # Half the tiny-grid mutants are gentle: one number moved to the edge of its domain.
        text, applied = mutate(rng, bases[base], gentle=base.endswith("_tiny") and rng.random() < 0.5)
        path = os.path.join(a.scratch, "mutants", "m%04d_%s.toml" % (i, base))
        with open(path, "w", encoding="utf-8", errors="surrogateescape") as f:
            f.write(text)
        mutants.append((path, base, applied))

    failures = []
    codes = {}
    accepted_tiny = []
    with concurrent.futures.ThreadPoolExecutor(max_workers=a.jobs) as pool:
        checks = list(pool.map(lambda m: check_one(a.heraldry, m[0], a.limit), mutants))
        for (path, base, applied), (p, timed_out, bad) in zip(mutants, checks):
            codes[p.returncode if p else "hang"] = codes.get(p.returncode if p else "hang", 0) + 1
            if bad:
                failures.append((path, applied, bad))
            elif p.returncode == 0 and base.endswith("_tiny"):
                m = re.search(r"total: (\d+) points", p.stdout)
                small = m is not None and int(m.group(1)) <= 60
                bounded = re.search(r"max_cutoff = 30\b", p.stdout) or re.search(r"cutoff: fixed at ([0-9]|[12][0-9]|30) ", p.stdout)
                # The dense engine is the reference (O(N^4) memory, minutes at N = 30): not run here.
                if small and bounded and "dense" not in open(path, encoding="utf-8", errors="replace").read():
                    accepted_tiny.append((path, applied))
        rng.shuffle(accepted_tiny)
        chosen = accepted_tiny[: a.runs]
        outs = [os.path.join(a.scratch, "out", os.path.basename(p) + ".h5") for p, _ in chosen]
        runs = list(pool.map(lambda x: run_one(a.heraldry, x[0][0], x[1], a.limit), zip(chosen, outs)))
        run_codes = {}
        for (path, applied), (p, bad) in zip(chosen, runs):
            key = p.returncode if p else "hang"
            run_codes[key] = run_codes.get(key, 0) + 1
            if bad:
                failures.append((path, applied, bad))

    print("campaign: seed %d, %d mutants of %d scenarios checked; exit codes %s" %
          (a.seed, len(mutants), len(names), dict(sorted(codes.items(), key=str))))
    print("campaign: %d runs of accepted tiny-grid mutants (of %d accepted); exit codes %s" %
          (len(chosen), len(accepted_tiny), dict(sorted(run_codes.items(), key=str))))
    for path, applied, bad in failures:
        kept = os.path.join(a.scratch, "failures", os.path.basename(path))
        shutil.copy(path, kept)
        for b in bad:
            print("FAIL %s (%s): %s" % (kept, ", ".join(applied), b))
    if len(mutants) < 1000:
        print("campaign: fewer than 1000 mutants")
        return 1
    if len(chosen) == 0:
        print("campaign: no mutant was run")
        return 1
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
