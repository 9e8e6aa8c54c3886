#!/bin/sh
# Write the synthetic levels of the invented example site to stdout:
#   tools/make-example-levels.sh > data/example/levels.csv
# Four weeks at 15-minute steps from 2025-01-06T00:00Z.  Headwater: a
# reservoir level drifting around 11.45 m with one flood that peaks at
# about 12.05 m on day 17.  Tailwater: an outfall channel driven by a
# semidiurnal tide (period 12.42 h) of 0.55 m amplitude around 11.35 m,
# with a spring-neap swing.  Gauge noise of a few millimetres from a
# Park-Miller generator (exact in awk's doubles, so every awk gives the
# same file), a few missing readings, and a 3-hour tailwater outage.
# Every number here is invented.
set -eu
awk 'BEGIN {
    seed = 20250106
    pi = 3.14159265358979
    print "# Quillbrook outlet chamber: synthetic levels (m above site datum)"
    print "time,reservoir,outfall"
    t0 = 1736121600            # 2025-01-06T00:00:00Z
    for (i = 0; i < 28 * 96; i++) {
        h = i / 4.0            # hours since the start
        day = h / 24.0
        flood = 0.6 * exp(-((day - 17.0) / 1.6) ^ 2)
        hw = 11.45 + 0.05 * sin(2 * pi * day / 9.0) + flood + noise() * 0.004
        spring = 1.0 + 0.3 * cos(2 * pi * day / 14.77)
        tw = 11.35 + 0.55 * spring * sin(2 * pi * h / 12.42) + noise() * 0.006
        hs = sprintf("%.3f", hw); ts = sprintf("%.3f", tw)
        if (i == 500 || i == 1211 || i == 2044) hs = ""       # missing
        if (i >= 1600 && i < 1612) ts = ""                      # outage
        if (i == 900) ts = "NaN"
        print stamp(t0 + i * 900) "," hs "," ts
    }
}
function noise(   u) {   # uniform in [-1, 1)
    seed = (seed * 16807) % 2147483647
    return 2.0 * seed / 2147483647 - 1.0
}
function stamp(s,   d, y, m, doy, mdays, hh, mm) {
    d = int(s / 86400); s -= d * 86400
    y = 1970
    while (d >= (leap(y) ? 366 : 365)) { d -= leap(y) ? 366 : 365; y++ }
    split("31 28 31 30 31 30 31 31 30 31 30 31", mdays, " ")
    if (leap(y)) mdays[2] = 29
    for (m = 1; d >= mdays[m]; m++) d -= mdays[m]
    hh = int(s / 3600); mm = int((s - hh * 3600) / 60)
    return sprintf("%04d-%02d-%02dT%02d:%02d:00Z", y, m, d + 1, hh, mm)
}
function leap(y) { return (y % 4 == 0 && y % 100 != 0) || y % 400 == 0 }'
