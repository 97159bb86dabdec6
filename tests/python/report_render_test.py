#!/usr/bin/env python3
"""Renders a frugal HTML report in Debian's headless Chromium and checks that it works offline.

    report_render_test.py --html FILE --screenshot OUT.png
    report_render_test.py --sample-maker PATH/make_sample_report --scratch DIR --screenshot OUT.png

The first form checks any report (the one `frugal report` writes, say); the second first has
make_sample_report write a small report with SVG and PNG figures into DIR. The checks:

1. `chromium --dump-dom` exits 0 and the dumped <body> carries data-figures-loaded equal to
   data-figures-total, and more than zero (the report's own script counts the figures that
   rendered once the page has loaded);
2. Chromium logged no console message: the report writes none, so any line with CONSOLE (an error,
   a failed resource, a script exception) or "Uncaught" is a failure;
3. `chromium --screenshot` writes a PNG of the page that is not blank.

4. the page asked the network for nothing: Chromium's net log (--log-net-log) holds no request
   made on behalf of the file:// page. Host names resolve to nothing during the run, so nothing
   leaves the machine either way; Chromium's own background requests (update checks, account
   and dictionary look-ups) carry another origin and are not counted. Exits 0 when every check holds, 1 when one fails, and 77 (the
test's SKIP_RETURN_CODE) when chromium is not installed. Python standard library only.
"""

import argparse
import json
import os
import re
import shutil
import struct
import subprocess
import sys
import tempfile
import zlib
from pathlib import Path

SKIP = 77
TIMEOUT_SECONDS = 120  # Chromium takes a few seconds to start; this only stops a hang

# Lines Chromium writes to stderr that say nothing about the page, each with why it is harmless.
# They are counted and reported, never failures; lines matching nothing here are printed in full.
IGNORED_STDERR = [
    (re.compile(r"dbus/|D-Bus|DBus|Floss manager|bluez|UPower"),
     "no system or session D-Bus in a container; Chromium asks it for power, bluetooth and screensaver state"),
    (re.compile(r"vaapi|drmGetDevices|gpu_init|viz_main|gl_surface|gles2|egl|ANGLE|GPU process|gpu-process|Vulkan|"
                r"command_buffer|skia|ui/gl/", re.IGNORECASE),
     "no GPU and no video-acceleration device; --disable-gpu makes Chromium draw in software"),
    (re.compile(r"InitializeSandbox|sandbox_linux|zygote_host", re.IGNORECASE),
     "the sandbox is off (--no-sandbox, needed when running as root)"),
    (re.compile(r"^/usr/bin/chromium: \d+: "),
     "Debian's start-up wrapper script compares the machine's memory size with a shell test it cannot parse"),
    (re.compile(r"crashpad|crash_report|breakpad", re.IGNORECASE), "the crash reporter has no database in a fresh profile"),
    (re.compile(r"fontconfig|Fontconfig", re.IGNORECASE), "font cache warnings of a minimal system"),
    (re.compile(r"google_apis|gcm|registration_request|component_updater|update_client|variations|"
                r"net/dns|host_resolver|network_change_notifier|ssl_client_socket|cert_verify|"
                r"mdns|net_error|ERR_NAME_NOT_RESOLVED|ERR_INTERNET_DISCONNECTED", re.IGNORECASE),
     "Chromium's own background services try the network, which is cut off on purpose"),
    (re.compile(r"Written to file|bytes written to file", re.IGNORECASE), "--screenshot reporting where it wrote"),
    (re.compile(r"ALSA|pulseaudio|audio_manager|libasound", re.IGNORECASE), "no sound device"),
    (re.compile(r"xdg-|desktop_environment|notification|kwallet|gnome-keyring|os_crypt|libsecret", re.IGNORECASE),
     "no desktop session or key ring"),
]
FAILURE_STDERR = re.compile(r"CONSOLE|Uncaught")


class CheckFailed(Exception):
    pass


def chromium_command(chromium, profile):
    return [chromium, "--headless=new", "--no-sandbox", "--disable-gpu", "--no-first-run", "--disable-extensions",
            f"--user-data-dir={profile}", "--enable-logging=stderr", "--v=0", "--virtual-time-budget=5000",
            "--disable-background-networking", "--host-resolver-rules=MAP * ~NOTFOUND"]


def run_chromium(command):
    try:
        result = subprocess.run(command, capture_output=True, text=True, errors="replace", timeout=TIMEOUT_SECONDS,
                                stdin=subprocess.DEVNULL)
    except subprocess.TimeoutExpired:
        raise CheckFailed(f"chromium did not finish within {TIMEOUT_SECONDS} s: {' '.join(command)}")
    if result.returncode != 0:
        raise CheckFailed(f"chromium exited {result.returncode}:\n{' '.join(command)}\n{result.stderr}")
    return result


def check_stderr(stderr, what):
    """Fails on console messages; prints what was ignored and why, and anything unrecognised."""
    failures, ignored, other = [], {}, []
    for line in stderr.splitlines():
        if not line.strip():
            continue
        if FAILURE_STDERR.search(line):
            failures.append(line)
            continue
        reason = next((why for pattern, why in IGNORED_STDERR if pattern.search(line)), None)
        if reason is None:
            other.append(line)
        else:
            ignored[reason] = ignored.get(reason, 0) + 1
    for reason, n in ignored.items():
        print(f"  {what}: ignored {n} stderr line(s): {reason}")
    for line in other:
        print(f"  {what}: other stderr line (not a failure): {line}")
    if failures:
        raise CheckFailed(f"{what}: the page logged console messages:\n" + "\n".join(failures))


def body_attributes(dom):
    body = re.search(r"<body\b([^>]*)>", dom)
    if body is None:
        raise CheckFailed("the dumped DOM has no <body>:\n" + dom[:2000])
    return dict(re.findall(r'([\w-]+)="([^"]*)"', body.group(1)))


def page_requests(net_log):
    """URLs the page itself asked the network for: requests whose network isolation key is the
    file:// site the report was opened from."""
    text = Path(net_log).read_text(errors="replace")
    try:
        log = json.loads(text)
    except json.JSONDecodeError:
        log = json.loads(text.rstrip().rstrip(",") + "]}")  # a log Chromium did not get to close
    types = {number: name for name, number in log["constants"]["logEventTypes"].items()}
    return sorted({event["params"]["url"] for event in log["events"]
                   if types.get(event["type"]) == "URL_REQUEST_START_JOB" and "url" in event.get("params", {})
                   and "file://" in event["params"].get("network_isolation_key", "")})


def check_dom(chromium, html, profile):
    net_log = profile + "-net-log.json"
    result = run_chromium(chromium_command(chromium, profile) +
                          [f"--log-net-log={net_log}", "--dump-dom", html.as_uri()])
    check_stderr(result.stderr, "--dump-dom")
    if not os.path.isfile(net_log):
        raise CheckFailed(f"chromium wrote no net log at {net_log}")
    requests = page_requests(net_log)
    if requests:
        raise CheckFailed("the report asked the network for:\n" + "\n".join(requests))
    print("  --dump-dom: the page requested nothing from the network")
    attributes = body_attributes(result.stdout)
    total, loaded = attributes.get("data-figures-total"), attributes.get("data-figures-loaded")
    if total is None or loaded is None:
        raise CheckFailed(f"<body> has no data-figures-total/-loaded (the report's script did not run): {attributes}")
    if int(total) <= 0:
        raise CheckFailed("the report has no figures (data-figures-total is 0)")
    if loaded != total:
        raise CheckFailed(f"{loaded} of {total} figures rendered")
    print(f"  --dump-dom: {loaded} of {total} figures rendered")
    return result.stdout


def png_pixels(path):
    """Width, height, channels and the unfiltered rows of an 8-bit, non-interlaced PNG (what
    Chromium writes), per the PNG specification's filter definitions."""
    data = Path(path).read_bytes()
    if data[:8] != b"\x89PNG\r\n\x1a\n":
        raise CheckFailed(f"{path}: not a PNG file")
    at, idat, header = 8, [], None
    while at < len(data):
        length, kind = struct.unpack(">I4s", data[at:at + 8])
        body = data[at + 8:at + 8 + length]
        if kind == b"IHDR":
            header = struct.unpack(">IIBBBBB", body)
        elif kind == b"IDAT":
            idat.append(body)
        at += 12 + length
    width, height, depth, colour, _, _, interlace = header
    channels = {0: 1, 2: 3, 4: 2, 6: 4}.get(colour)
    if depth != 8 or channels is None or interlace != 0:
        raise CheckFailed(f"{path}: a PNG layout this check does not decode (depth {depth}, colour type {colour})")
    raw = zlib.decompress(b"".join(idat))
    stride = width * channels
    rows, previous = [], bytearray(stride)
    for y in range(height):
        kind = raw[y * (stride + 1)]
        line = bytearray(raw[y * (stride + 1) + 1:(y + 1) * (stride + 1)])
        if kind == 1:
            for i in range(channels, stride):
                line[i] = (line[i] + line[i - channels]) & 255
        elif kind == 2:
            line = bytearray((a + b) & 255 for a, b in zip(line, previous))
        elif kind == 3:
            for i in range(stride):
                left = line[i - channels] if i >= channels else 0
                line[i] = (line[i] + ((left + previous[i]) >> 1)) & 255
        elif kind == 4:
            for i in range(stride):
                a = line[i - channels] if i >= channels else 0
                b = previous[i]
                c = previous[i - channels] if i >= channels else 0
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                line[i] = (line[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
        rows.append(bytes(line))
        previous = line
    return width, height, channels, rows


def check_screenshot(chromium, html, screenshot, profile):
    screenshot = Path(screenshot).resolve()
    screenshot.parent.mkdir(parents=True, exist_ok=True)
    if screenshot.exists():
        screenshot.unlink()
    result = run_chromium(chromium_command(chromium, profile) +
                          [f"--screenshot={screenshot}", "--window-size=1280,2400", html.as_uri()])
    check_stderr(result.stderr, "--screenshot")
    if not screenshot.is_file():
        raise CheckFailed(f"chromium wrote no screenshot at {screenshot}")
    width, height, channels, rows = png_pixels(screenshot)
    # Blank means one colour everywhere: count pixels that differ from the most common one.
    counts = {}
    for row in rows[::4]:
        for x in range(0, width * channels, 4 * channels):
            pixel = row[x:x + channels]
            counts[pixel] = counts.get(pixel, 0) + 1
    sampled = sum(counts.values())
    background = max(counts.values())
    inked = 1 - background / sampled
    print(f"  --screenshot: {screenshot} ({width}x{height}), {len(counts)} colours in a 1-in-16 sample, "
          f"{100 * inked:.1f}% of sampled pixels differ from the background")
    if inked < 0.01 or len(counts) < 8:
        raise CheckFailed(f"{screenshot}: the screenshot is blank ({len(counts)} colours, {100 * inked:.2f}% inked)")


def check_report(html, screenshot, chromium):
    """Every check on one report file; raises CheckFailed with what went wrong."""
    html = Path(html).resolve()
    if not html.is_file():
        raise CheckFailed(f"{html}: no such file")
    with tempfile.TemporaryDirectory(prefix="frugal-chromium-") as profile:
        check_dom(chromium, html, os.path.join(profile, "dom"))
        check_screenshot(chromium, html, screenshot, os.path.join(profile, "screenshot"))


def main():
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    source = parser.add_mutually_exclusive_group(required=True)
    source.add_argument("--html", help="the report to check")
    source.add_argument("--sample-maker", help="make_sample_report, which writes a sample report into --scratch")
    parser.add_argument("--scratch", help="folder for the sample report (with --sample-maker)")
    parser.add_argument("--screenshot", required=True, help="where to write the PNG screenshot")
    parser.add_argument("--chromium", default="chromium", help="the browser to run (default: chromium on PATH)")
    arguments = parser.parse_args()

    chromium = shutil.which(arguments.chromium)
    if chromium is None:
        print("SKIPPED: chromium not installed (Debian package chromium)")
        return SKIP
    try:
        html = arguments.html
        if html is None:
            if not arguments.scratch:
                raise CheckFailed("--sample-maker needs --scratch")
            made = subprocess.run([arguments.sample_maker, arguments.scratch], capture_output=True, text=True,
                                  timeout=TIMEOUT_SECONDS)
            if made.returncode != 0:
                raise CheckFailed(f"{arguments.sample_maker} exited {made.returncode}:\n{made.stderr}")
            html = made.stdout.strip()
        print(f"checking {html} in {chromium}")
        check_report(html, arguments.screenshot, chromium)
    except CheckFailed as failure:
        print(f"FAILED: {failure}")
        return 1
    print("OK: the report renders offline: every figure drawn, no console message, no network request")
    return 0


if __name__ == "__main__":
    sys.exit(main())
