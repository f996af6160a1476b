/*
 * input_status: the input thread's part of `latticed status` (see
 * input_status.c).  Input thread only.
 */
#ifndef LATTICED_INPUT_STATUS_H
#define LATTICED_INPUT_STATUS_H

#include <stddef.h>

#include "input_thread.h"
#include "snapshot.h"

/* Fills s from the thread's state and the backend's description. */
void input_status_fill(struct input_thread *t, struct status_snapshot *s);

#endif
