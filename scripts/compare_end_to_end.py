"""End to end against Little CMS 2: whole processes on one 48-megapixel picture.

    python3 scripts/compare_end_to_end.py PLATESMITH PROFILE.icc WORKDIR DOC REPEATS

Makes a 48-megapixel (8000 x 6000) 8-bit RGB uncompressed TIFF in WORKDIR
from the demo picture (examples/harbour-lights.png, scaled with Lanczos),
then times, alternating, REPEATS times each:

- lcms2: a Python process that decodes the TIFF with Pillow, transforms it
  from sRGB into PROFILE.icc (the profile `platesmith profile` wrote for the
  default settings; perceptual) with Little CMS 2 through PIL.ImageCms, and
  encodes an uncompressed CMYK TIFF with the profile embedded;
- platesmith, cold: `separate --plates none` with the default settings and
  an empty table cache folder;
- platesmith, warm: the same with the cache the cold run filled.

Each process is timed from start to end (wall clock) with its peak resident
memory (wait4 rusage). Figures go between the lcms2-end-to-end markers of DOC.
"""

import json
import os
import shutil
import statistics
import subprocess
import sys
import time

sys.path.insert(0, os.path.join(os.path.dirname(__file__)))
from record_block import record_block  # noqa: E402

LCMS_JOB = r"""
import sys
from PIL import Image, ImageCms
src, icc, out = sys.argv[1:4]
im = Image.open(src)
im.load()
profile = open(icc, "rb").read()
transform = ImageCms.buildTransform(
    ImageCms.createProfile("sRGB"), ImageCms.ImageCmsProfile(icc), "RGB", "CMYK",
    renderingIntent=ImageCms.Intent.PERCEPTUAL)
cmyk = ImageCms.applyTransform(im, transform)
cmyk.save(out, format="TIFF", compression=None, icc_profile=profile)
"""

WIDTH, HEIGHT = 8000, 6000


def make_picture(path):
    from PIL import Image

    demo = Image.open(os.path.join(os.path.dirname(__file__), "..", "examples", "harbour-lights.png")).convert("RGB")
    demo.resize((WIDTH, HEIGHT), Image.Resampling.LANCZOS).save(path, format="TIFF", compression=None)


def timed(cmd, env=None):
    """Wall seconds and peak resident memory (MiB) of one process."""
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - start
    err = proc.stderr.read().decode(errors="replace")
    proc.stderr.close()
    if os.waitstatus_to_exitcode(status) != 0:
        sys.exit(f"{' '.join(cmd)} failed: {err}")
    return wall, usage.ru_maxrss / 1024


def main():
    bin_, icc, work, doc, repeats = sys.argv[1:6]
    repeats = int(repeats)
    picture = os.path.join(work, "picture-48mp.tif")
    make_picture(picture)
    cache = os.path.join(work, "table-cache")
    out = os.path.join(work, "separated")
    env = dict(os.environ, PLATESMITH_CACHE_DIR=cache)
    env.pop("PLATESMITH_CACHE_LIMIT_MIB", None)
    separate = [bin_, "separate", picture, "--plates", "none", "--out-dir", out, "--force"]
    lcms = [sys.executable, "-c", LCMS_JOB, picture, icc, os.path.join(work, "lcms2.tif")]
    load_before = open("/proc/loadavg").read().split()[:3]
    runs = {"lcms2": [], "cold": [], "warm": []}
    summaries = {"cold": [], "warm": []}
    # One untimed run of each first, so the picture is in the page cache for all.
    timed(lcms)
    for _ in range(repeats):
        runs["lcms2"].append(timed(lcms))
        for kind in ("cold", "warm"):
            if kind == "cold":
                shutil.rmtree(cache, ignore_errors=True)
            runs[kind].append(timed(separate, env))
            with open(os.path.join(out, "picture-48mp.summary.json")) as f:
                summaries[kind].append(json.load(f)["timings"])
    load_after = open("/proc/loadavg").read().split()[:3]

    def med(kind):
        return statistics.median(w for w, _ in runs[kind])

    def best(kind):
        return min(w for w, _ in runs[kind])

    def peak(kind):
        return max(m for _, m in runs[kind])

    def stage(kind, name):
        return statistics.median(t[name] for t in summaries[kind])

    sources = {k: sorted({t["table_source"] for t in summaries[k]}) for k in summaries}
    assert sources["cold"] == ["built"] and sources["warm"] == ["cached"], sources
    ratio = {k: med("lcms2") / med(k) for k in ("cold", "warm")}
    ratio_best = {k: best("lcms2") / best(k) for k in ("cold", "warm")}
    goal = {"cold": 1.3, "warm": 2.0}

    def met(k):
        return "met" if ratio[k] >= goal[k] else "**missed**"

    commit = subprocess.run(["git", "rev-parse", "--short", "HEAD"], capture_output=True, text=True).stdout.strip()
    model = open("/proc/cpuinfo").read().split("model name")[1].split(":", 1)[1].split("\n", 1)[0].strip()
    loaded = float(load_before[0]) >= 0.5
    lines = [
        f"Machine: {model}, {os.cpu_count()} threads; commit {commit}; "
        f"{time.strftime('%Y-%m-%d %H:%M UTC', time.gmtime())}; {WIDTH} × {HEIGHT} pixels, "
        f"{repeats} runs of each, alternating; Pillow {__import__('PIL').__version__}.",
        f"Load average (1, 5, 15 min): {' '.join(load_before)} before the run, {' '.join(load_after)} after."
        + (" **Recorded on a loaded machine**: the ratios, measured side by side, are the figures to read."
           if loaded else ""),
        "",
        "| process | wall, median (best) | peak RSS | platesmith stages, median: read, table, separate, write |",
        "| --- | --- | --- | --- |",
        f"| lcms2 through Pillow (one thread) | {med('lcms2'):.2f} s ({best('lcms2'):.2f} s) | {peak('lcms2'):.0f} MiB | |",
    ]
    for k in ("cold", "warm"):
        lines.append(
            f"| platesmith, {k} cache | {med(k):.2f} s ({best(k):.2f} s) | {peak(k):.0f} MiB | "
            f"{stage(k, 'read_ms') / 1000:.2f}, {stage(k, 'table_ms') / 1000:.2f}, "
            f"{stage(k, 'separate_ms') / 1000:.2f}, {stage(k, 'write_ms') / 1000:.2f} s |"
        )
    lines += [
        "",
        "| ratio (lcms2 time / platesmith time) | median | best | goal |",
        "| --- | --- | --- | --- |",
    ]
    for k in ("cold", "warm"):
        lines.append(f"| {k} cache | {ratio[k]:.2f} × | {ratio_best[k]:.2f} × | ≥ {goal[k]} ×: {met(k)} |")
    record_block(doc, "lcms2-end-to-end", lines)


if __name__ == "__main__":
    main()
