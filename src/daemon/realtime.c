/*
 * realtime: see realtime.h.  The warnings name the fix for the two ways
 * latticed is usually run: a systemd unit (LimitRTPRIO=, LimitMEMLOCK=)
 * and a user's shell (/etc/security/limits.d/, read by pam_limits).
 */
#include "realtime.h"

#include <errno.h>
#include <pwd.h>
#include <sched.h>
#include <stdio.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/resource.h>
#include <unistd.h>

#include "log_ring.h"

static const char *user_name(void)
{
	struct passwd *pw = getpwuid(getuid());
	return pw && pw->pw_name ? pw->pw_name : "USER";
}

void realtime_lock_memory(void)
{
	if (mlockall(MCL_CURRENT | MCL_FUTURE) == 0)
		return;
	int saved = errno;
	struct rlimit rl;
	char limit[32] = "unknown";
	if (getrlimit(RLIMIT_MEMLOCK, &rl) == 0 && rl.rlim_cur != RLIM_INFINITY)
		snprintf(limit, sizeof limit, "%llu KiB", (unsigned long long)rl.rlim_cur / 1024);
	log_print(LOG_LEVEL_WARNING,
		  "cannot lock memory: %s (limit %s); allow it with LimitMEMLOCK=128M in the unit or '%s - memlock 131072' in /etc/security/limits.d/, or set lock_memory = no",
		  strerror(saved), limit, user_name());
}

bool realtime_promote(const pthread_t *threads, int count, int priority)
{
	struct sched_param param = {.sched_priority = priority};
	for (int i = 0; i < count; i++) {
		int rc = pthread_setschedparam(threads[i], SCHED_FIFO, &param);
		if (rc != 0) {
			struct sched_param normal = {.sched_priority = 0};
			for (int j = 0; j < i; j++)
				(void)pthread_setschedparam(threads[j], SCHED_OTHER, &normal);
			log_print(LOG_LEVEL_WARNING,
				  "cannot use real-time priority %d: %s; allow it with LimitRTPRIO=%d in the unit or '%s - rtprio %d' in /etc/security/limits.d/ (running at normal priority)",
				  priority, strerror(rc), priority, user_name(), priority);
			return false;
		}
	}
	return true;
}
