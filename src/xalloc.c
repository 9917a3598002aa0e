/* xalloc.c - allocation that aborts on exhaustion; growable buffers. */
#include "xalloc.h"

#include <gmp.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* atomic: the simulation allocates from several OpenMP threads */
static atomic_ulong allocation_count;

static void out_of_memory(size_t size)
{
	fprintf(stderr, "itox: out of memory (asking for %zu bytes)\n", size);
	abort();
}

void *xmalloc(size_t size)
{
	void *ptr = malloc(size ? size : 1);
	if (!ptr)
		out_of_memory(size);
	atomic_fetch_add_explicit(&allocation_count, 1, memory_order_relaxed);
	return ptr;
}

void *xcalloc(size_t count, size_t size)
{
	if (size && count > SIZE_MAX / size)
		out_of_memory(SIZE_MAX);
	void *ptr = calloc(count ? count : 1, size ? size : 1);
	if (!ptr)
		out_of_memory(count * size);
	atomic_fetch_add_explicit(&allocation_count, 1, memory_order_relaxed);
	return ptr;
}

void *xrealloc(void *ptr, size_t size)
{
	void *grown = realloc(ptr, size ? size : 1);
	if (!grown)
		out_of_memory(size);
	atomic_fetch_add_explicit(&allocation_count, 1, memory_order_relaxed);
	return grown;
}

void *xreallocarray(void *ptr, size_t count, size_t size)
{
	if (size && count > SIZE_MAX / size)
		out_of_memory(SIZE_MAX);
	return xrealloc(ptr, count * size);
}

char *xstrdup(const char *text)
{
	return xstrndup(text, strlen(text));
}

char *xstrndup(const char *text, size_t length)
{
	char *copy = xmalloc(length + 1);
	memcpy(copy, text, length);
	copy[length] = '\0';
	return copy;
}

char *xasprintf(const char *format, ...)
{
	va_list args;
	va_start(args, format);
	int length = vsnprintf(NULL, 0, format, args);
	va_end(args);
	if (length < 0)
		length = 0;
	char *text = xmalloc((size_t)length + 1);
	va_start(args, format);
	vsnprintf(text, (size_t)length + 1, format, args);
	va_end(args);
	return text;
}

static void *gmp_allocate(size_t size)
{
	return xmalloc(size);
}

static void *gmp_reallocate(void *ptr, size_t old_size, size_t new_size)
{
	(void)old_size;
	return xrealloc(ptr, new_size);
}

static void gmp_release(void *ptr, size_t size)
{
	(void)size;
	free(ptr);
}

void xalloc_use_for_gmp(void)
{
	mp_set_memory_functions(gmp_allocate, gmp_reallocate, gmp_release);
}

unsigned long xalloc_count(void)
{
	return atomic_load_explicit(&allocation_count, memory_order_relaxed);
}

static void xbuf_reserve(xbuf *buf, size_t extra)
{
	if (buf->length + extra + 1 <= buf->capacity)
		return;
	size_t capacity = buf->capacity ? buf->capacity : 64;
	while (capacity < buf->length + extra + 1)
		capacity *= 2;
	buf->data = xrealloc(buf->data, capacity);
	buf->capacity = capacity;
}

void xbuf_putn(xbuf *buf, const char *text, size_t length)
{
	xbuf_reserve(buf, length);
	memcpy(buf->data + buf->length, text, length);
	buf->length += length;
	buf->data[buf->length] = '\0';
}

void xbuf_put(xbuf *buf, const char *text)
{
	xbuf_putn(buf, text, strlen(text));
}

void xbuf_putc(xbuf *buf, char c)
{
	xbuf_putn(buf, &c, 1);
}

/* Formats into the free space first; only a result that does not fit is
 * formatted a second time, into a grown buffer. */
void xbuf_printf(xbuf *buf, const char *format, ...)
{
	xbuf_reserve(buf, 64);
	size_t room = buf->capacity - buf->length;
	va_list args;
	va_start(args, format);
	int length = vsnprintf(buf->data + buf->length, room, format, args);
	va_end(args);
	if (length <= 0) {
		buf->data[buf->length] = '\0';
		return;
	}
	if ((size_t)length >= room) {
		xbuf_reserve(buf, (size_t)length);
		va_start(args, format);
		vsnprintf(buf->data + buf->length, (size_t)length + 1, format, args);
		va_end(args);
	}
	buf->length += (size_t)length;
}

char *xbuf_take(xbuf *buf)
{
	char *text = buf->data ? buf->data : xstrdup("");
	buf->data = NULL;
	buf->length = buf->capacity = 0;
	return text;
}

void xbuf_free(xbuf *buf)
{
	free(buf->data);
	buf->data = NULL;
	buf->length = buf->capacity = 0;
}
