/* SPDX-License-Identifier: GPL-3.0-or-later */
/* JSON and CSV for sweeps: requests, scenario labels, report, results. */
#ifndef WEFT_API_CODEC_SWEEP_H
#define WEFT_API_CODEC_SWEEP_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

struct db_sweep;
struct db_sweep_result;
struct err;
struct model;
struct plan;

struct sweep_req {
	char kind[16];
	double scale;		/* 1 when not given */
	double time_limit_s;	/* 0: not given */
};

/* Decodes a POST /v1/sweeps body; ERR_INVALID naming the member. */
int codec_sweep_decode(const char *text, size_t len, struct sweep_req *rq,
    struct err *e);

/* {"kind":..,"scale":..} as stored with the sweep. */
char *codec_sweep_params(const struct sweep_req *rq);

/* A scenario's label: {"<key>":[ids]} and {"srlgs":[g]}. */
char *codec_fail_json(const char *key, const char *const *ids, size_t n);
char *codec_fail_srlg_json(uint32_t g);

/*
 * The survivability report (docs/api.md) over the scenarios with have[i]:
 * worst[a] is the largest load of arc a of live model m over them and
 * worst_idx[a] the scenario (-1: none); p is the live plan.
 */
char *codec_sweep_report(const struct model *m, const struct plan *p,
    double headroom, const double *worst, const long *worst_idx,
    const struct db_sweep_result *all, const bool *have, size_t n);

/*
 * GET /v1/sweeps/{id}: the stored sweep with its results (done is their
 * count); when running, done (the live count) gives the time left and
 * elapsed_s is the live one.
 */
char *codec_sweep_encode(const struct db_sweep *s,
    const struct db_sweep_result *rs, size_t n, bool running, long done,
    double elapsed_s, size_t *lenp);

/* GET /v1/sweeps. */
char *codec_sweeps_encode(const struct db_sweep *s, size_t n,
    size_t *lenp);

/* results.csv and links.csv (from the stored report). */
char *codec_sweep_results_csv(const struct db_sweep_result *rs, size_t n,
    size_t *lenp);
char *codec_sweep_links_csv(const struct db_sweep *s, size_t *lenp);

#endif /* WEFT_API_CODEC_SWEEP_H */
