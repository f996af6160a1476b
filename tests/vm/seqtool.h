/*
 * seqtool.h: what seqtool.c shares with the benchmark commands in
 * seqtool_bench.c (forward, stream): failing with a message, clocks,
 * option values, sequencer clients, ports and queues, percentiles.
 */
#ifndef SEQTOOL_H
#define SEQTOOL_H

#include <alsa/asoundlib.h>
#include <signal.h>
#include <stdbool.h>
#include <stddef.h>

#define EXIT_FAIL 1
#define EXIT_USAGE 2

/* Set by SIGINT and SIGTERM once catch_signals() ran. */
extern volatile sig_atomic_t stop_requested;
void catch_signals(void);

/* Prints "seqtool: ..." on stderr and exits with status. */
void die(int status, const char *fmt, ...) __attribute__((format(printf, 2, 3), noreturn));
/* Dies naming `what` when an alsa-lib call returned an error. */
void check(int err, const char *what);

double now_ms(void);                      /* CLOCK_MONOTONIC */
void sleep_until_ms(double ms);           /* on that clock; returns early on a stop request */
void pause_ms(double ms);
double real_ms(const snd_seq_real_time_t *t);

double opt_double(const char *opt, const char *s);
long opt_long(const char *opt, const char *s, long min, long max);

/* A blocking client with that name. */
snd_seq_t *client_open(const char *name);
/* A port; when tsqueue >= 0 every event it receives is stamped with that queue's real time. */
int port_create(snd_seq_t *seq, const char *name, unsigned caps, int tsqueue);
int queue_start(snd_seq_t *seq);
double queue_now_ms(snd_seq_t *seq, int q);
/* Waits up to `seconds` for the port to exist; dies naming the ports there are. */
snd_seq_addr_t port_await(snd_seq_t *seq, const char *spec, double seconds);

int cmp_double(const void *a, const void *b);
/* Nearest-rank percentile of a sorted array (NAN when empty). */
double percentile(const double *v, size_t n, double pct);

int cmd_forward(int argc, char **argv);
int cmd_stream(int argc, char **argv);

#endif
