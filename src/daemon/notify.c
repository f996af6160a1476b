/*
 * notify: thin wrappers over sd_notify; see notify.h.
 */
#include "notify.h"

#include <stdarg.h>
#include <stdio.h>

#ifdef LATTICED_HAVE_SYSTEMD
#include <systemd/sd-daemon.h>

void notify_ready(void)
{
	sd_notify(0, "READY=1");
}

void notify_reloading(void)
{
	sd_notify(0, "RELOADING=1");
}

void notify_stopping(void)
{
	sd_notify(0, "STOPPING=1");
}

void notify_watchdog(void)
{
	sd_notify(0, "WATCHDOG=1");
}

void notify_status(const char *fmt, ...)
{
	char text[256];
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(text, sizeof text, fmt, ap);
	va_end(ap);
	sd_notifyf(0, "STATUS=%s", text);
}

uint64_t notify_watchdog_usec(void)
{
	uint64_t usec = 0;
	return sd_watchdog_enabled(0, &usec) > 0 ? usec : 0;
}

#else

void notify_ready(void)
{
}

void notify_reloading(void)
{
}

void notify_stopping(void)
{
}

void notify_watchdog(void)
{
}

void notify_status(const char *fmt, ...)
{
	(void)fmt;
}

uint64_t notify_watchdog_usec(void)
{
	return 0;
}

#endif
