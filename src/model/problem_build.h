/* Private to the problem builder (problem*.c): the state shared while a problem is
 * built from its config, and the helpers every part uses. */
#ifndef LOPSIDE_PROBLEM_BUILD_H
#define LOPSIDE_PROBLEM_BUILD_H

#include "lopside/input/parse.h"
#include "lopside/model/problem.h"

typedef struct {
    const lop_config *cfg;
    lop_error *err;
    lop_problem *p;
    bool nested;   /* building a believed problem: no [rule.NAME] or [output] of its own */
} builder;

/* Returns LOP_EINPUT after setting the builder's error at FILE:line, section and key. */
lop_status pb_error(builder *b, int line, const char *section, const char *key,
                    const char *fmt, ...) __attribute__((format(printf, 5, 6)));
/* Returns LOP_ERUN after setting an out-of-memory error. */
lop_status pb_no_memory(builder *b);
/* Returns the entry section/key of the file, or NULL. */
const lop_entry *pb_find(builder *b, const char *section, const char *key);
/* Returns the line of a section's header, 0 when the file has no such section. */
int pb_section_line(builder *b, const char *section);
/* Reads an optional number (default when absent); errors name the entry. */
lop_status pb_number(builder *b, const char *section, const char *key, bool required,
                     double fallback, double *out);
/* Moves the items of list into *items (the problem owns them from now on). */
void pb_take_list(lop_list *list, char ***items, size_t *n);

/* Each returns LOP_OK after building its part of b->p, else the error's status. */
lop_status pb_build_channels(builder *b);   /* [evidence] and [evidence.NAME] */
lop_status pb_build_scores(builder *b);     /* [loss] or [payoff] */
lop_status pb_build_rules(builder *b);      /* [rule.NAME] */
lop_status pb_build_studies(builder *b);    /* [value], [sweep.*], [design.*], [simulate] */
/* Frees what the studies and a channel own (not the structs themselves). */
void pb_free_studies(lop_problem *p);
void pb_free_channel(lop_channel *c);
/* Returns a problem built from cfg without rules or outputs of its own (believed). */
lop_problem *pb_build_nested(const lop_config *cfg, lop_error *err);

#endif
