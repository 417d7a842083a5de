#!/usr/bin/python3
"""Checks a pulsewise trace file with h5py, a reader independent of pulsewise's own.

It checks the layout of docs/trace-file.md (root attributes, chunked and compressed extendible
datasets of matching lengths) and that the average of each named signal over the last cycle,
integrated from the waveform rows with the trapezoidal rule, equals the exact average stored in
/summary/last_cycle to a relative tolerance. The trapezoidal rule is exact for piecewise-linear
waveforms whose breakpoints are all rows (the recorder writes every piece boundary, and both
values at a jump); for curved waveforms its error is O(h^2) (e.g. Press et al., Numerical
Recipes, 3rd ed., section 4.1), so a caller gives a tolerance to match.

usage: check_trace.py FILE SIGNAL [SIGNAL ...] [--rtol R] [--atol A]
Exit status 0 when every check passes, 1 otherwise.
"""
import argparse
import sys

import h5py
import numpy as np


def text(value):
    return value.decode() if isinstance(value, bytes) else str(value)


def check_layout(f, failures):
    if text(f.attrs.get("format", "")) != "pulsewise-trace":
        failures.append("root attribute format is not 'pulsewise-trace'")
    if int(f.attrs.get("format_version", 0)) != 1:
        failures.append("format_version is not 1")
    if int(f.attrs.get("complete", 0)) != 1:
        failures.append("the file is not marked complete")
    time = f["waveforms/time_s"]
    values = f["waveforms/values"]
    names = [text(n) for n in f["signals/name"][...]]
    if values.shape != (time.shape[0], len(names)):
        failures.append(f"waveforms/values has shape {values.shape} for {len(names)} signals")
    for dataset in (time, values, f["cycles/average"], f["events/time_s"]):
        if dataset.chunks is None or dataset.compression != "gzip" or dataset.maxshape[0] is not None:
            failures.append(f"{dataset.name} is not chunked, deflated and extendible")
    return names


def check_last_cycle_average(f, names, signal, rtol, atol, failures):
    period = float(f.attrs["switching_period_s"])
    last = f["summary/last_cycle"]
    begin = float(last.attrs["start_time_s"])
    end = begin + period
    time = f["waveforms/time_s"][...]
    inside = (time >= begin) & (time <= end)
    t = time[inside]
    if t.size < 2 or t[0] != begin or abs(t[-1] - end) > 1e-9 * period:
        failures.append(f"waveform rows do not span the last cycle [{begin}, {end}]")
        return
    k = names.index(signal)
    y = f["waveforms/values"][inside, k]
    average = np.trapz(y, t) / (t[-1] - t[0])
    expected = float(last.attrs["average"][k])
    error = abs(average - expected)
    print(f"{signal}: trapezoid average {average!r}, stored exact average {expected!r}, "
          f"error {error:.3e} (tolerance {rtol:g} relative + {atol:g})")
    if error > rtol * abs(expected) + atol:
        failures.append(f"{signal}: last-cycle average off by {error:.3e}")
    table = float(f["cycles/average"][-1, k])
    if table != expected:
        failures.append(f"{signal}: cycle table average {table!r} differs from the summary")


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("file")
    parser.add_argument("signals", nargs="+")
    parser.add_argument("--rtol", type=float, default=1e-12)
    parser.add_argument("--atol", type=float, default=0.0)
    args = parser.parse_args()
    failures = []
    with h5py.File(args.file, "r") as f:
        names = check_layout(f, failures)
        for signal in args.signals:
            if signal not in names:
                failures.append(f"no signal {signal} in {names}")
                continue
            check_last_cycle_average(f, names, signal, args.rtol, args.atol, failures)
    for failure in failures:
        print("FAIL:", failure)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
