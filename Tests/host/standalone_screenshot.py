#!/usr/bin/python3
"""Opens the Kerf standalone on a virtual X display (Xvfb), lets it write a screenshot of its
window (--screenshot) and checks that it closed cleanly.

Fails when Xvfb does not start, the app does not exit within the time limit, exits with a code
other than 0, prints a JUCE assertion or leak report, or the PNG is missing, not a PNG of the
window's size, or does not show the response curve's colour. No sound card or JACK server is
needed: the app must come up without audio devices (JACK is never auto-started).

usage: standalone_screenshot.py --app PATH --out PNG [--timeout S]
"""
import argparse
import os
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib

# ResponseView::curveColour() (Gui/ResponseView.h): the whole chain's curve.
CURVE_RGB = (0xF2, 0xA6, 0x5A)


def start_xvfb():
    """Xvfb on a display it picks itself (-displayfd), so parallel tests never collide."""
    read_fd, write_fd = os.pipe()
    proc = subprocess.Popen(
        ["Xvfb", "-displayfd", str(write_fd), "-screen", "0", "1280x1024x24", "-nolisten", "tcp"],
        pass_fds=(write_fd,), stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    os.close(write_fd)
    number = b""
    with os.fdopen(read_fd, "rb") as r:
        while not number.endswith(b"\n"):
            chunk = r.read(1)
            if not chunk:
                break
            number += chunk
    if not number.strip():
        proc.kill()
        _, err = proc.communicate()
        raise RuntimeError("Xvfb did not start: " + err.decode(errors="replace"))
    return proc, ":" + number.decode().strip()


def read_png(path):
    """(width, height, rows of RGB tuples) of an 8-bit RGB or RGBA PNG (PNG specification,
    ISO/IEC 15948: chunks, zlib stream, per-row filters 0-4)."""
    with open(path, "rb") as f:
        data = f.read()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise ValueError("not a PNG")
    pos, idat, width = 8, b"", None
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            width, height, depth, colour = struct.unpack(">IIBB", body[:10])
            if depth != 8 or colour not in (2, 6):
                raise ValueError("unexpected PNG format: depth %d colour type %d" % (depth, colour))
            bpp = 3 if colour == 2 else 4
        elif kind == b"IDAT":
            idat += body
        pos += 12 + length
    raw = zlib.decompress(idat)
    stride = width * bpp
    rows, prev, i = [], bytearray(stride), 0
    for _ in range(height):
        ftype, line = raw[i], bytearray(raw[i + 1:i + 1 + stride])
        i += 1 + stride
        for x in range(stride):
            a = line[x - bpp] if x >= bpp else 0
            b = prev[x]
            c = prev[x - bpp] if x >= bpp else 0
            if ftype == 1:
                line[x] = (line[x] + a) & 255
            elif ftype == 2:
                line[x] = (line[x] + b) & 255
            elif ftype == 3:
                line[x] = (line[x] + (a + b) // 2) & 255
            elif ftype == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                pred = a if pa <= pb and pa <= pc else (b if pb <= pc else c)
                line[x] = (line[x] + pred) & 255
        rows.append([tuple(line[x:x + 3]) for x in range(0, stride, bpp)])
        prev = line
    return width, height, rows


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--app", required=True)
    ap.add_argument("--out", required=True)
    ap.add_argument("--timeout", type=float, default=90.0)
    args = ap.parse_args()
    for tool in ("Xvfb",):
        if shutil.which(tool) is None:
            print("standalone_screenshot: %s is not installed (Debian package xvfb)" % tool)
            return 77
    out = os.path.abspath(args.out)
    os.makedirs(os.path.dirname(out), exist_ok=True)
    if os.path.exists(out):
        os.remove(out)

    xvfb, display = start_xvfb()
    config = tempfile.mkdtemp(prefix="kerf-standalone-")
    try:
        env = dict(os.environ, DISPLAY=display, XDG_CONFIG_HOME=config, HOME=config,
                   JACK_NO_START_SERVER="1")
        try:
            run = subprocess.run([os.path.abspath(args.app), "--screenshot", out], env=env, cwd=config,
                                 capture_output=True, text=True, timeout=args.timeout)
        except subprocess.TimeoutExpired as e:
            print("FAIL: the standalone did not quit within %.0f s" % args.timeout)
            print((e.stderr or b"").decode(errors="replace") if isinstance(e.stderr, bytes)
                  else (e.stderr or ""))
            return 1
        log = run.stdout + run.stderr
        print(log.strip())
        problems = []
        if run.returncode != 0:
            problems.append("exit code %d" % run.returncode)
        for marker in ("JUCE Assertion", "Leaked objects", "*** Leaked", "Segmentation"):
            if marker in log:
                problems.append("log shows '%s'" % marker)
        if not os.path.exists(out):
            problems.append("no screenshot at " + out)
        else:
            width, height, rows = read_png(out)
            curve = sum(row.count(CURVE_RGB) for row in rows)
            colours = len({p for row in rows[::4] for p in row[::4]})
            print("screenshot %s: %dx%d, %d pixels of the curve colour, %d colours sampled"
                  % (out, width, height, curve, colours))
            # The editor's minimum size is 480 x 400 (KerfEditor), inside JUCE's window frame.
            if width < 480 or height < 400:
                problems.append("screenshot only %dx%d" % (width, height))
            if curve < 100:
                problems.append("the response curve is not in the screenshot")
            if colours < 8:
                problems.append("the screenshot is nearly uniform (%d colours)" % colours)
        if problems:
            print("FAIL: " + "; ".join(problems))
            return 1
        print("OK: standalone opened on %s, screenshot saved, closed with exit code 0" % display)
        return 0
    finally:
        xvfb.terminate()
        try:
            xvfb.wait(timeout=10)
        except subprocess.TimeoutExpired:
            xvfb.kill()
        shutil.rmtree(config, ignore_errors=True)


if __name__ == "__main__":
    sys.exit(main())
