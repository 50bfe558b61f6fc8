/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Numbers for people: rates with SI units, percentages, durations. */
#include <math.h>
#include <stdio.h>

#include "fmt.h"

static char *
dash(char *buf)
{
	snprintf(buf, FMT_LEN, "-");
	return buf;
}

char *
fmt_bps(char *buf, double bps)
{
	static const char *const units[] = { "bit/s", "kbit/s", "Mbit/s",
		"Gbit/s", "Tbit/s", "Pbit/s", "Ebit/s" };
	double v;
	int u = 0, decimals;

	if (!isfinite(bps))
		return dash(buf);
	if (bps == 0) {
		snprintf(buf, FMT_LEN, "0 bit/s");
		return buf;
	}
	v = fabs(bps);
	/* 999.5 would print as "1000": move up a unit instead. */
	while (v >= 999.5 && u < 6) {
		v /= 1000;
		u++;
	}
	decimals = v < 9.995 ? 2 : v < 99.95 ? 1 : 0;
	snprintf(buf, FMT_LEN, "%s%.*f %s", bps < 0 ? "-" : "", decimals, v,
	    units[u]);
	return buf;
}

char *
fmt_pct(char *buf, double frac)
{
	if (!isfinite(frac))
		return dash(buf);
	snprintf(buf, FMT_LEN, "%.1f%%", 100 * frac);
	return buf;
}

char *
fmt_num(char *buf, double x)
{
	if (!isfinite(x))
		return dash(buf);
	snprintf(buf, FMT_LEN, "%.4g", x);
	return buf;
}

char *
fmt_secs(char *buf, double s)
{
	long t;

	if (!isfinite(s) || s < 0)
		return dash(buf);
	if (s < 1) {
		snprintf(buf, FMT_LEN, "%.0f ms", 1000 * s);
		return buf;
	}
	t = lround(s);
	if (t < 60)
		snprintf(buf, FMT_LEN, "%ld s", t);
	else if (t < 3600)
		snprintf(buf, FMT_LEN, "%ldm%02lds", t / 60, t % 60);
	else
		snprintf(buf, FMT_LEN, "%ldh%02ldm", t / 3600, t % 3600 / 60);
	return buf;
}
