/*
 * view_cmd: `latticed view [--listen ADDR:PORT] [--socket PATH]
 * [--config FILE] [--control] [--token-file FILE]`, the command: options,
 * the listening address, the token, signals, then the link loop until
 * SIGTERM or SIGINT (view.h for the threads).  Exit status 0 after a
 * signal, 1 when it cannot start (the port taken, a bad token file), 2 for
 * a bad command line.
 */
#define _GNU_SOURCE /* getrandom */
#include "view_cmd.h"

#include <arpa/inet.h>
#include <errno.h>
#include <getopt.h>
#include <netinet/in.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/random.h>
#include <sys/stat.h>

#include "control_cmd.h"
#include "log_ring.h"
#include "view.h"
#include "view_http.h"
#include "view_link.h"

#define EXIT_USAGE 2

struct view_options {
	const char *listen, *socket, *config, *token_file;
	bool control;
};

static void usage(FILE *f, const char *default_config)
{
	fprintf(f,
		"Usage: latticed view [--listen ADDR:PORT] [--socket PATH] [--config FILE]\n"
		"                     [--control [--token-file FILE]]\n"
		"Serve a live page of the running daemon: the lattice with the sounding tones lit,\n"
		"the chord held, the preset and root.  Open it in a browser on this machine, or on\n"
		"a phone when listening on the network.\n"
		"\n"
		"  -l, --listen ADDR:PORT  where to serve (default 127.0.0.1:%d, this machine only;\n"
		"                          0.0.0.0:%d serves every network: see latticed(8))\n"
		"  -s, --socket PATH       the daemon's control socket\n"
		"  -c, --config FILE       find the socket from FILE's control_socket (default %s)\n"
		"      --control           let the page change preset and root and end every note;\n"
		"                          every such request needs the token printed at start\n"
		"  -t, --token-file FILE   with --control: the token is the first line of FILE\n"
		"  -h, --help              show this help\n",
		VIEW_DEFAULT_PORT, VIEW_DEFAULT_PORT, default_config);
}

static int read_options(int argc, char **argv, struct view_options *o, const char *default_config)
{
	static const struct option options[] = {
		{"listen", required_argument, NULL, 'l'},
		{"socket", required_argument, NULL, 's'},
		{"config", required_argument, NULL, 'c'},
		{"control", no_argument, NULL, 'C'},
		{"token-file", required_argument, NULL, 't'},
		{"help", no_argument, NULL, 'h'},
		{NULL, 0, NULL, 0},
	};
	int opt;
	while ((opt = getopt_long(argc, argv, "l:s:c:t:h", options, NULL)) != -1) {
		switch (opt) {
		case 'l': o->listen = optarg; break;
		case 's': o->socket = optarg; break;
		case 'c': o->config = optarg; break;
		case 'C': o->control = true; break;
		case 't': o->token_file = optarg; break;
		case 'h':
			usage(stdout, default_config);
			return 0;
		default:
			fprintf(stderr, "Try 'latticed view --help'.\n");
			return EXIT_USAGE;
		}
	}
	if (optind < argc) {
		fprintf(stderr, "latticed view: unexpected argument '%s'\nTry 'latticed view --help'.\n",
			argv[optind]);
		return EXIT_USAGE;
	}
	if (o->token_file && !o->control) {
		fprintf(stderr, "latticed view: --token-file is for --control; without it the page is read-only\n");
		return EXIT_USAGE;
	}
	return -1;
}

/* ADDR:PORT, [V6]:PORT or localhost:PORT into addr; false if it is none of them. */
static bool parse_listen(const char *text, struct sockaddr_storage *addr, bool *loopback)
{
	char host[128];
	const char *colon = strrchr(text, ':');
	if (!colon || (size_t)(colon - text) >= sizeof host || colon == text)
		return false;
	memcpy(host, text, (size_t)(colon - text));
	host[colon - text] = '\0';
	char *end;
	long port = strtol(colon + 1, &end, 10);
	if (*end || end == colon + 1 || port < 1 || port > 65535)
		return false;
	memset(addr, 0, sizeof *addr);
	struct sockaddr_in *v4 = (struct sockaddr_in *)addr;
	struct sockaddr_in6 *v6 = (struct sockaddr_in6 *)addr;
	if (strcmp(host, "localhost") == 0)
		snprintf(host, sizeof host, "127.0.0.1");
	size_t n = strlen(host);
	if (host[0] == '[' && host[n - 1] == ']') {
		host[n - 1] = '\0';
		if (inet_pton(AF_INET6, host + 1, &v6->sin6_addr) != 1)
			return false;
		v6->sin6_family = AF_INET6;
		v6->sin6_port = htons((uint16_t)port);
		*loopback = IN6_IS_ADDR_LOOPBACK(&v6->sin6_addr);
		return true;
	}
	if (inet_pton(AF_INET, host, &v4->sin_addr) != 1)
		return false;
	v4->sin_family = AF_INET;
	v4->sin_port = htons((uint16_t)port);
	*loopback = (ntohl(v4->sin_addr.s_addr) >> 24) == 127;
	return true;
}

static bool token_character(char c)
{
	return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') ||
	       c == '-' || c == '.' || c == '_' || c == '~';
}

/* The first line of path; false after one line saying what is wrong. */
static bool read_token(const char *path, struct view *v)
{
	FILE *f = fopen(path, "r");
	char line[VIEW_TOKEN_MAX + 2] = "";
	if (!f) {
		fprintf(stderr, "latticed view: %s: cannot read the token: %s\n", path, strerror(errno));
		return false;
	}
	struct stat st;
	if (fstat(fileno(f), &st) == 0 && (st.st_mode & 077))
		fprintf(stderr, "latticed view: warning: %s can be read by other users: chmod 600 %s\n",
			path, path);
	bool got = fgets(line, sizeof line, f) != NULL;
	fclose(f);
	size_t n = got ? strcspn(line, "\r\n") : 0;
	line[n] = '\0';
	bool ok = n >= VIEW_TOKEN_MIN && n < VIEW_TOKEN_MAX;
	for (size_t i = 0; i < n && ok; i++)
		ok = token_character(line[i]);
	if (!ok) {
		fprintf(stderr, "latticed view: %s: the token must be the first line, %d to %d letters, digits or - . _ ~\n",
			path, VIEW_TOKEN_MIN, VIEW_TOKEN_MAX - 1);
		return false;
	}
	memcpy(v->token, line, n + 1);
	v->token_length = n;
	return true;
}

static bool make_token(struct view *v)
{
	unsigned char bytes[16];
	if (getrandom(bytes, sizeof bytes, 0) != (ssize_t)sizeof bytes) {
		fprintf(stderr, "latticed view: cannot make a token: %s\n", strerror(errno));
		return false;
	}
	for (size_t i = 0; i < sizeof bytes; i++)
		snprintf(v->token + 2 * i, 3, "%02x", bytes[i]);
	v->token_length = 2 * sizeof bytes;
	return true;
}

static void on_signal(int sig)
{
	(void)sig;
	view_quit = 1;
}

/* TERM and INT blocked everywhere (libmicrohttpd's threads inherit it) and
 * open only in the link's ppoll; SIGPIPE ignored. */
static void install_signals(sigset_t *run_mask)
{
	struct sigaction sa;
	memset(&sa, 0, sizeof sa);
	sa.sa_handler = on_signal;
	sigemptyset(&sa.sa_mask);
	sigaction(SIGTERM, &sa, NULL);
	sigaction(SIGINT, &sa, NULL);
	sa.sa_handler = SIG_IGN;
	sigaction(SIGPIPE, &sa, NULL);
	sigset_t block;
	sigemptyset(&block);
	sigaddset(&block, SIGTERM);
	sigaddset(&block, SIGINT);
	pthread_sigmask(SIG_BLOCK, &block, run_mask);
	sigdelset(run_mask, SIGTERM);
	sigdelset(run_mask, SIGINT);
}

static void announce(const struct view_options *o, const char *listen, const struct view *v)
{
	const char *how = v->control ? "with control" : "read-only: start it with --control for buttons";
	printf("latticed view: serving http://%s/ (%s)\n", listen, how);
	if (v->control && !o->token_file)
		printf("latticed view: control token %s; open http://%s/#token=%s\n", v->token, listen,
		       v->token);
	if (!v->loopback)
		printf("latticed view: listening beyond this machine: anyone who can reach %s sees what is played%s\n",
		       listen, v->control ? ", and anyone with the token controls latticed" : "");
	fflush(stdout);
}

int view_cmd_run(int argc, char **argv, const char *default_config)
{
	struct view_options o = {0};
	int status = read_options(argc, argv, &o, default_config);
	if (status >= 0)
		return status;
	char listen[160];
	if (o.listen)
		snprintf(listen, sizeof listen, "%s", o.listen);
	else
		snprintf(listen, sizeof listen, "127.0.0.1:%d", VIEW_DEFAULT_PORT);
	struct sockaddr_storage addr;
	static struct view v;
	if (!parse_listen(listen, &addr, &v.loopback)) {
		fprintf(stderr, "latticed view: --listen is '%s', expected ADDR:PORT, e.g. 127.0.0.1:%d or 0.0.0.0:%d\n",
			listen, VIEW_DEFAULT_PORT, VIEW_DEFAULT_PORT);
		return EXIT_USAGE;
	}
	static struct view_link link;
	if (o.socket)
		snprintf(link.paths[0], CONTROL_PATH_MAX, "%s", o.socket);
	link.path_count = o.socket ? 1 : control_socket_candidates(o.config, default_config, link.paths);
	v.control = o.control;
	if (link.path_count == 0 || (o.control && !(o.token_file ? read_token(o.token_file, &v) : make_token(&v))))
		return 1;
	log_setup();
	if (!view_init(&v) || !view_model_init(&link.model)) {
		fprintf(stderr, "latticed view: out of memory\n");
		return 1;
	}
	sigset_t run_mask;
	install_signals(&run_mask);
	char err[256];
	struct view_server *server = view_http_start(&v, (const struct sockaddr *)&addr, err, sizeof err);
	if (!server) {
		fprintf(stderr, "latticed view: %s: %s\n", listen, err);
		status = 1;
	} else {
		announce(&o, listen, &v);
		view_link_run(&link, &v, &run_mask);
		log_print(LOG_LEVEL_NOTICE, "view: stopping");
		view_http_stop(server);
		status = 0;
	}
	view_model_free(&link.model);
	view_destroy(&v);
	return status;
}
