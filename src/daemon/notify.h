/*
 * notify: the daemon's messages to systemd (sd_notify(3)): READY=1 once
 * the ports are up, STATUS= lines, RELOADING=1 / READY=1 around a reload,
 * STOPPING=1, and WATCHDOG=1 pings.  Built without libsystemd
 * (LATTICED_HAVE_SYSTEMD undefined) every call does nothing and the
 * watchdog is off, so the daemon runs the same outside systemd.
 * Main thread only.
 */
#ifndef LATTICED_NOTIFY_H
#define LATTICED_NOTIFY_H

#include <stdint.h>

void notify_ready(void);
void notify_reloading(void);
void notify_stopping(void);
void notify_watchdog(void);
void notify_status(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* The watchdog period systemd asked for (WatchdogSec=), in microseconds, or 0. */
uint64_t notify_watchdog_usec(void);

#endif
