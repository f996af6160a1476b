/*
 * request: what the main thread asks of the input thread, and what comes
 * back.  Both travel through an spsc_queue (one each way) as plain values;
 * a pointer in them passes ownership of what it points at: a tuning set
 * or a snapshot belongs to the input thread from the moment its request is
 * pushed until it comes back in a reply, and to the main thread otherwise.
 * `id` is the main thread's own tag (a control client), returned as is.
 */
#ifndef LATTICED_REQUEST_H
#define LATTICED_REQUEST_H

#include <stdbool.h>
#include <stdint.h>

#include "latticed/engine.h"

struct tuning_set;
struct status_snapshot;

enum request_kind {
	REQUEST_PANIC,            /* every note off on every output */
	REQUEST_PRESET,           /* by name, or by index when name is empty */
	REQUEST_ROOT,             /* text: home, a tone label, or number: 0 home, n: tone n-1 is 1/1 */
	REQUEST_TUNINGS,          /* swap in `tunings` (a reload) */
	REQUEST_SNAPSHOT,         /* fill `snapshot` */
	REQUEST_QUIT,             /* panic, stop reading, exit the loop */
};

struct request {
	enum request_kind kind;
	int id;
	int number;
	char name[ENGINE_NAME_MAX];
	char text[LATTICE_LABEL_MAX];   /* REQUEST_ROOT: the argument as written */
	struct tuning_set *tunings;
	struct status_snapshot *snapshot;
};

enum reply_kind {
	REPLY_DONE,               /* a request finished: ok, text says what */
	REPLY_SNAPSHOT,           /* `snapshot` is filled */
	REPLY_RETIRED_TUNINGS,    /* `tunings` is no longer used: free it */
	REPLY_TUNING_STATE,       /* preset or root changed (from MIDI too) */
};

#define REPLY_TEXT_MAX 320

struct reply {
	enum reply_kind kind;
	enum request_kind request;
	int id;
	bool ok;
	char text[REPLY_TEXT_MAX];
	/* REPLY_TUNING_STATE: where new notes play, for the state file */
	char preset[ENGINE_NAME_MAX];
	char root[LATTICE_LABEL_MAX];   /* a tone label, or "home" */
	struct tuning_set *tunings;
	struct status_snapshot *snapshot;
};

#define REQUEST_QUEUE_SLOTS 64
#define REPLY_QUEUE_SLOTS 128

#endif
