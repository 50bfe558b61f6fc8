/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Levelled logging to stderr: one line an event, "message key=value ...". */
#ifndef WEFT_BASE_LOG_H
#define WEFT_BASE_LOG_H

enum log_level {
	LOG_LVL_ERR = 0,
	LOG_LVL_WARN = 1,
	LOG_LVL_INFO = 2,
	LOG_LVL_DEBUG = 3,
};

/* The current level; messages above it are not formatted at all. */
extern enum log_level log_level_cur;

/* Sets the level (thread-safe enough: set once at start-up). */
void log_set_level(enum log_level lvl);

/* Parses "error", "warn", "info", "debug"; returns 0 or ERR_INVALID. */
int log_level_parse(const char *s, enum log_level *lvlp);

/* Writes one line; use the macros below instead. Any thread may call it. */
void log_write(enum log_level lvl, const char *file, int line,
    const char *func, const char *fmt, ...)
    __attribute__((format(printf, 5, 6)));

#define LOG_AT(lvl, ...) do {						\
	if ((lvl) <= log_level_cur)					\
		log_write((lvl), __FILE__, __LINE__, __func__, __VA_ARGS__); \
} while (0)

#define log_err(...)	LOG_AT(LOG_LVL_ERR, __VA_ARGS__)
#define log_warn(...)	LOG_AT(LOG_LVL_WARN, __VA_ARGS__)
#define log_info(...)	LOG_AT(LOG_LVL_INFO, __VA_ARGS__)
#define log_debug(...)	LOG_AT(LOG_LVL_DEBUG, __VA_ARGS__)

#endif /* WEFT_BASE_LOG_H */
