#!/bin/sh
# Write the demo data set of the invented Velloran reservoir outlet into
# data/demo/ (run from the repository root; the files are committed, so
# this is only needed to change them):
#   reservoir.csv   headwater, 15 min, 2025-10-01 to 2026-03-31, UTC, m
#   outfall-ft.csv  tailwater logger in feet above its own gauge zero,
#                   10 min, local time (Europe/London) without offset
#   forecast-2026-02.csv  a 24-member tailwater ensemble and a deterministic
#                   headwater for ten days of the February flood, hourly
#   headwater-forecast.csv  a headwater-only forecast, hourly
# Headwater: a slow seasonal level with two floods (mid-November, early
# February) from a synthetic inflow/release balance; tailwater: tide (M2
# 12.42 h and S2 12.00 h constituents, invented amplitudes) with a surge in
# the floods.  Gauge noise of a few millimetres from a Park-Miller generator
# (exact in awk's doubles, so every awk writes the same files), a few missing
# readings, one headwater sensor spike, one headwater reading out of range
# (a logger writing 0 on a power dip), a tailwater logger stuck for 12 hours
# and a two-day tailwater outage: each is caught by a quality test of the
# demo site (velloran.ini).
# Every name and number here is invented.
set -eu
out=data/demo
mkdir -p "$out"
awk -v out="$out" '
function noise(   u) { seed = (seed * 16807) % 2147483647; return 2.0 * seed / 2147483647 - 1.0 }
function leap(y) { return (y % 4 == 0 && y % 100 != 0) || y % 400 == 0 }
function civil(s, fmt,   d, y, m, md, hh, mm) {
    d = int(s / 86400); s -= d * 86400; y = 1970
    while (d >= (leap(y) ? 366 : 365)) { d -= leap(y) ? 366 : 365; y++ }
    split("31 28 31 30 31 30 31 31 30 31 30 31", md, " "); if (leap(y)) md[2] = 29
    for (m = 1; d >= md[m]; m++) d -= md[m]
    hh = int(s / 3600); mm = int((s - hh * 3600) / 60)
    return sprintf(fmt, y, m, d + 1, hh, mm)
}
# last Sunday of a month at 01:00 UTC (UK and EU rule): seconds since 1970
function last_sunday(y, m,   s, d, w) {
    s = days(y, m + 1, 1) * 86400 - 86400
    w = (int(s / 86400) + 4) % 7          # 1970-01-01 was a Thursday (4)
    return s - w * 86400 + 3600
}
function days(y, m, d,   n, yy, mm, md) {
    if (m == 13) { y++; m = 1 }
    n = 0; for (yy = 1970; yy < y; yy++) n += leap(yy) ? 366 : 365
    split("31 28 31 30 31 30 31 31 30 31 30 31", md, " "); if (leap(y)) md[2] = 29
    for (mm = 1; mm < m; mm++) n += md[mm]
    return n + d - 1
}
function flood(day) { return 0.62 * exp(-((day - 46) / 2.2) ^ 2) + 0.70 * exp(-((day - 127) / 2.6) ^ 2) }
function headwater(h,   day) { day = h / 24; return 11.40 + 0.06 * sin(2 * 3.14159265 * day / 60) + flood(day) }
function tailwater(h,   day) {
    day = h / 24
    return 11.25 + 0.50 * sin(2 * 3.14159265 * h / 12.42) + 0.15 * sin(2 * 3.14159265 * h / 12.00 + 1.1) + 0.45 * flood(day)
}
BEGIN {
    seed = 20251001
    t0 = 1759276800                         # 2025-10-01T00:00:00Z
    n = (days(2026, 4, 1) - days(2025, 10, 1)) * 96
    f = out "/reservoir.csv"
    print "# Velloran reservoir: headwater gauge, m above the site datum (synthetic)" > f
    print "time,level_m" > f
    for (i = 0; i < n; i++) {
        v = sprintf("%.3f", headwater(i / 4) + 0.004 * noise())
        if (i == 3000 || i == 9111 || i == 15000) v = ""
        if (i == 7777) v = sprintf("%.3f", headwater(i / 4) + 1.6)     # spike
        if (i == 12345) v = "0.000"                                    # out of range
        print civil(t0 + 900 * i, "%04d-%02d-%02dT%02d:%02d:00Z") "," v > f
    }
    # tailwater logger: feet above its zero at 9.1440 m, local UK time
    bst_end = last_sunday(2025, 10); bst_start = last_sunday(2026, 3)
    f = out "/outfall-ft.csv"
    print "# Velloran outfall: tailwater logger, feet above gauge zero, local time" > f
    print "Timestamp;Stage_ft" > f
    for (i = 0; i < n * 3 / 2; i++) {
        s = t0 + 600 * i
        local = s + ((s < bst_end || s >= bst_start) ? 3600 : 0)
        v = (tailwater(i / 6) - 9.144) / 0.3048 + 0.02 * noise()
        txt = sprintf("%.2f", v); sub(/\./, ",", txt)            # decimal comma
        if (i >= 12000 && i < 12288) txt = "-9999"               # two-day outage
        if (i == 18000) stuck = txt                              # stuck logger,
        if (i > 18000 && i < 18072) txt = stuck                  # 12 hours
        if (i == 5003 || i == 20101) txt = ""
        print civil(local, "%04d-%02d-%02d %02d:%02d") ";" txt > f
    }
    # forecast for the February flood: issued 2026-02-02T00:00Z, ten days
    f = out "/forecast-2026-02.csv"
    hdr = "time,headwater"
    for (m = 1; m <= 24; m++) hdr = hdr sprintf(",tw_%02d", m)
    print hdr > f
    h0 = (days(2026, 2, 2) - days(2025, 10, 1)) * 24
    for (k = 0; k <= 240; k++) {
        line = civil(t0 + 3600 * (h0 + k), "%04d-%02d-%02dT%02d:%02d:00Z") sprintf(",%.3f", headwater(h0 + k) + 0.02 * k / 240)
        for (m = 1; m <= 24; m++) {
            surge = 0.25 * (m - 12.5) / 12 * exp(-((k - 100) / 40) ^ 2)
            line = line sprintf(",%.3f", tailwater(h0 + k) + surge + 0.01 * noise())
        }
        print line > f
    }
    f = out "/headwater-forecast.csv"
    print "time,headwater" > f
    for (k = 0; k <= 240; k++)
        print civil(t0 + 3600 * (h0 + k), "%04d-%02d-%02dT%02d:%02d:00Z") sprintf(",%.3f", headwater(h0 + k) + 0.03 * k / 240) > f
}'
echo "wrote $out/reservoir.csv, outfall-ft.csv, forecast-2026-02.csv, headwater-forecast.csv"
