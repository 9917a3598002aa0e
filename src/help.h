/* help.h - the text of `help` and `help TOPIC`. */
#ifndef ITOX_HELP_H
#define ITOX_HELP_H

/* The help text for a topic (NULL or "" for the overview); NULL when unknown. */
const char *help_text(const char *topic);

/* Topics, NULL-terminated (for completion and tests). */
extern const char *const help_topics[];

#endif
