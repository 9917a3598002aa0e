/* xalloc.h - the one place where memory is obtained.
 *
 * Out of memory is not an error value: it aborts with a message, because GMP's
 * allocation functions must not return on failure and a longjmp out of them is
 * undefined (GMP manual, "Custom Allocation").  Tests may install a counting hook.
 */
#ifndef ITOX_XALLOC_H
#define ITOX_XALLOC_H

#include <stddef.h>

void *xmalloc(size_t size);			  /* never returns NULL */
void *xcalloc(size_t count, size_t size);	  /* zeroed; checks count*size overflow */
void *xrealloc(void *ptr, size_t size);		  /* never returns NULL for size > 0 */
void *xreallocarray(void *ptr, size_t count, size_t size); /* checks overflow */
char *xstrdup(const char *text);
char *xstrndup(const char *text, size_t length);
char *xasprintf(const char *format, ...) __attribute__((format(printf, 1, 2)));
void xalloc_use_for_gmp(void);			  /* route GMP's allocations through here */

/* Allocation counter for tests: the number of successful allocations so far. */
unsigned long xalloc_count(void);

/* A growable byte buffer (for printers and messages). */
typedef struct xbuf {
	char *data;
	size_t length, capacity;
} xbuf;
void xbuf_put(xbuf *buf, const char *text);
void xbuf_putn(xbuf *buf, const char *text, size_t length);
void xbuf_putc(xbuf *buf, char c);
void xbuf_printf(xbuf *buf, const char *format, ...) __attribute__((format(printf, 2, 3)));
char *xbuf_take(xbuf *buf); /* the NUL-terminated text; the buffer is reset */
void xbuf_free(xbuf *buf);

#endif
