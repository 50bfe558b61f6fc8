/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Numbers for people: rates with SI units, percentages, durations. */
#ifndef WEFT_CLIENT_FMT_H
#define WEFT_CLIENT_FMT_H

/*
 * Each function writes into buf (at least FMT_LEN bytes) and returns buf,
 * so several can appear in one printf().  A value that is not finite (a
 * JSON null or a missing member) is written as "-".
 */

#define FMT_LEN		48

/* A rate: 3 significant digits and a unit, "7.50 Gbit/s", "800 bit/s". */
char *fmt_bps(char *buf, double bps);

/* A fraction as a percentage with one decimal: 0.75 -> "75.0%". */
char *fmt_pct(char *buf, double frac);

/* A plain number, 4 significant digits: "4.5e+10", "0.9". */
char *fmt_num(char *buf, double x);

/* A duration: "850 ms", "41 s", "1m13s", "2h05m". */
char *fmt_secs(char *buf, double s);

#endif /* WEFT_CLIENT_FMT_H */
