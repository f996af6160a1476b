/*
 * view: the state the link and the HTTP threads share (view.h).
 */
#include "view.h"

#include <stdlib.h>
#include <string.h>

bool view_init(struct view *v)
{
	pthread_condattr_t attr;
	if (pthread_condattr_init(&attr) != 0)
		return false;
	/* the streams wait with timeouts on the monotonic clock */
	bool ok = pthread_condattr_setclock(&attr, CLOCK_MONOTONIC) == 0 &&
		  pthread_cond_init(&v->changed, &attr) == 0;
	pthread_condattr_destroy(&attr);
	if (!ok)
		return false;
	if (pthread_mutex_init(&v->lock, NULL) != 0) {
		pthread_cond_destroy(&v->changed);
		return false;
	}
	return true;
}

void view_destroy(struct view *v)
{
	free(v->page);
	free(v->svg);
	v->page = v->svg = NULL;
	pthread_mutex_destroy(&v->lock);
	pthread_cond_destroy(&v->changed);
}

void view_publish(struct view *v, char *page, const char *svg, size_t svg_length, bool new_svg,
		  bool daemon_up, const char *socket_path)
{
	char *copy = NULL;
	if (new_svg && svg) {
		copy = malloc(svg_length);
		if (copy)
			memcpy(copy, svg, svg_length);
	}
	pthread_mutex_lock(&v->lock);
	free(v->page);
	v->page = page;
	if (new_svg) {
		free(v->svg);
		v->svg = copy;
		v->svg_length = copy ? svg_length : 0;
	}
	v->daemon_up = daemon_up;
	if (socket_path[0])
		strncpy(v->socket_path, socket_path, sizeof v->socket_path - 1);
	v->version++;
	pthread_cond_broadcast(&v->changed);
	pthread_mutex_unlock(&v->lock);
}

void view_stop_streams(struct view *v)
{
	pthread_mutex_lock(&v->lock);
	v->stopping = true;
	pthread_cond_broadcast(&v->changed);
	pthread_mutex_unlock(&v->lock);
}
