/* The built-in example, compiled into the binary so `lopside demo` works anywhere. */
#ifndef LOPSIDE_DEMO_H
#define LOPSIDE_DEMO_H

#include <stddef.h>

/* The example's file name, as shown in reports. */
extern const char lop_demo_name[];

/* The example's lines, each ending in a newline, NULL-terminated (generated at build time). */
extern const char *const lop_demo_lines[];

#endif
