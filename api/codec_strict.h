/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Strict JSON reading that the decoders share: depth, keys, members. */
#ifndef WEFT_API_CODEC_STRICT_H
#define WEFT_API_CODEC_STRICT_H

/*
 * Only api/codec_*.c include this header, after jansson.h.  Members are
 * checked, never repaired: a wrong type, an unknown member, a number out
 * of range is ERR_INVALID with where the JSON path ("links[2].a").
 */

#include <stdbool.h>
#include <stddef.h>

struct err;
struct json_t;

/* Parses text as one JSON object, nesting at most CODEC_DEPTH_MAX
   (codec_model.h).  0 with *jp (json_decref), or ERR_INVALID. */
int codec_parse_object(const char *text, size_t len, struct json_t **jp,
    struct err *e);

/* Writes "base.key" (or "key" when base is "") into w, cut to fit n. */
const char *codec_path(char *w, size_t n, const char *base,
    const char *key);

/* Rejects members of obj not named in keys (NULL-terminated). */
int codec_check_keys(struct json_t *obj, const char *const *keys,
    const char *base, struct err *e);

/* Checks an id's form: 1..MODEL_ID_MAX bytes, no control chars, no '/'. */
int codec_check_id(const char *s, const char *where, struct err *e);

/* String member (borrowed): absent or null (when nullable) gives NULL,
   an error only when required. */
int codec_get_str(struct json_t *obj, const char *key, const char *base,
    bool required, bool nullable, const char **sp, struct err *e);

/* Number member in [lo, hi] ((lo, hi] when lo_open); absent: *xp
   untouched, *hasp false, an error when required. */
int codec_get_num(struct json_t *obj, const char *key, const char *base,
    bool required, double lo, bool lo_open, double hi, double *xp,
    bool *hasp, struct err *e);

#endif /* WEFT_API_CODEC_STRICT_H */
