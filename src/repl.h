/* repl.h - the interactive loop on GNU readline. */
#ifndef ITOX_REPL_H
#define ITOX_REPL_H

#include <signal.h>

#include "session.h"

/* Run the REPL until Ctrl-D or quit; interrupt is the flag the session polls. */
int repl_run(session *s, volatile sig_atomic_t *interrupt, bool quiet);

#endif
