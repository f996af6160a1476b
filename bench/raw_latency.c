/*
 * raw_latency: how long a note takes through `latticed run` with the raw
 * backend, from the input byte written to the output byte read.  A
 * benchmark that prints figures (median, 90th and 99th percentile,
 * worst), never a pass/fail test.
 *
 * It makes two FIFOs in a temporary directory, starts the daemon on them
 * (bend output, running status off), then plays N notes one at a time:
 * it stamps the clock, writes a note-on into the input FIFO, and waits
 * for the output's note-on (status 9n) to come out of the output FIFO; a
 * note-off follows the same way.  Both ends are in this process, so one
 * clock measures both (CLOCK_MONOTONIC).
 *
 * Usage: raw_latency LATTICED_BINARY [NOTES]
 *
 * With RAW_LATENCY_WAIT set it prints "control socket PATH" once the
 * daemon is up and waits for a line on standard input before it plays,
 * so a caller can attach clients to the daemon first (tests/browser_check.py
 * opens pages of `latticed view` on it).
 */
#define _GNU_SOURCE
#include <errno.h>
#include <fcntl.h>
#include <poll.h>
#include <signal.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

static double now_us(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return ts.tv_sec * 1e6 + ts.tv_nsec / 1e3;
}

static int cmp(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return x < y ? -1 : x > y;
}

/* Reads until a byte with the wanted high nibble shows up; false on timeout. */
static bool wait_status(int fd, unsigned char high)
{
	unsigned char buf[256];
	for (;;) {
		struct pollfd p = {.fd = fd, .events = POLLIN};
		if (poll(&p, 1, 2000) <= 0)
			return false;
		ssize_t n = read(fd, buf, sizeof buf);
		if (n < 0 && errno == EAGAIN)
			continue;
		if (n <= 0)
			return false;
		for (ssize_t i = 0; i < n; i++)
			if ((buf[i] & 0xF0) == high)
				return true;
	}
}

int main(int argc, char **argv)
{
	if (argc < 2) {
		fprintf(stderr, "usage: raw_latency LATTICED_BINARY [NOTES]\n");
		return 2;
	}
	int notes = argc > 2 ? atoi(argv[2]) : 2000;
	char dir[] = "/tmp/latticed-bench-XXXXXX";
	if (!mkdtemp(dir)) {
		perror("mkdtemp");
		return 1;
	}
	char in[256], out[256], conf[256], sock[256];
	snprintf(in, sizeof in, "%s/in", dir);
	snprintf(out, sizeof out, "%s/out", dir);
	snprintf(conf, sizeof conf, "%s/bench.conf", dir);
	snprintf(sock, sizeof sock, "%s/control", dir);
	if (mkfifo(in, 0600) || mkfifo(out, 0600)) {
		perror("mkfifo");
		return 1;
	}
	FILE *f = fopen(conf, "w");
	fprintf(f, "[daemon]\nbackend = raw\ncontrol_socket = %s\n[input]\nconnect = %s\n"
		   "[output synth]\nconnect = %s\n", sock, in, out);
	fclose(f);
	/* the synth end first, so the daemon's output opens at once */
	int out_fd = open(out, O_RDONLY | O_NONBLOCK);
	pid_t pid = fork();
	if (pid == 0) {
		int null = open("/dev/null", O_WRONLY);
		dup2(null, 2);
		execl(argv[1], argv[1], "run", "--config", conf, (char *)NULL);
		_exit(127);
	}
	int in_fd = -1;
	for (int i = 0; i < 500 && in_fd < 0; i++) {
		in_fd = open(in, O_WRONLY | O_NONBLOCK); /* ENXIO until the daemon reads */
		if (in_fd < 0)
			usleep(10000);
	}
	if (in_fd < 0) {
		fprintf(stderr, "raw_latency: the daemon did not open %s\n", in);
		kill(pid, SIGKILL);
		return 1;
	}
	usleep(200000);
	if (getenv("RAW_LATENCY_WAIT")) {
		char line[16];
		printf("control socket %s\n", sock);
		fflush(stdout);
		if (!fgets(line, sizeof line, stdin))
			fprintf(stderr, "raw_latency: no go-ahead on standard input; playing anyway\n");
	}
	unsigned char drain[4096];
	while (read(out_fd, drain, sizeof drain) > 0)
		; /* the set-up messages */
	double *lat = calloc((size_t)notes * 2, sizeof *lat);
	int count = 0;
	for (int i = 0; i < notes; i++) {
		unsigned char on[3] = {0x90, (unsigned char)(48 + i % 24), 100};
		unsigned char off[3] = {0x80, on[1], 64};
		double t0 = now_us();
		if (write(in_fd, on, 3) != 3 || !wait_status(out_fd, 0x90))
			break;
		lat[count++] = now_us() - t0;
		t0 = now_us();
		if (write(in_fd, off, 3) != 3 || !wait_status(out_fd, 0x80))
			break;
		lat[count++] = now_us() - t0;
	}
	kill(pid, SIGTERM);
	waitpid(pid, NULL, 0);
	unlink(in);
	unlink(out);
	unlink(conf);
	rmdir(dir);
	if (count < 2) {
		fprintf(stderr, "raw_latency: no notes came through\n");
		return 1;
	}
	qsort(lat, (size_t)count, sizeof *lat, cmp);
	printf("latticed raw backend, input byte to output byte, %d messages (note-on and note-off):\n", count);
	printf("  median %.1f us, p90 %.1f us, p99 %.1f us, worst %.1f us\n", lat[count / 2],
	       lat[count * 90 / 100], lat[count * 99 / 100], lat[count - 1]);
	free(lat);
	return 0;
}
