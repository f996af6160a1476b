/*
 * alsa_ports: the connections of the ALSA sequencer backend (model at the
 * top of alsa_seq.c).  Sources are numbered by source_ids as they appear
 * (a subscription or a first event) and forgotten when their port, client
 * or subscription goes; an output's destinations are read from the
 * kernel after any notice that concerns it and compared with the last
 * list.  Everything here runs on the input thread.
 */
#include <errno.h>
#include <stdio.h>
#include <string.h>

#include "alsa_connect.h"
#include "alsa_seq.h"

static uint32_t addr_key(snd_seq_addr_t a)
{
	return (uint32_t)a.client << 8 | a.port;
}

static bool addr_equal(snd_seq_addr_t a, snd_seq_addr_t b)
{
	return a.client == b.client && a.port == b.port;
}

/* "client:port" by names, or by numbers once the port has gone. */
static void addr_name(struct midi_io *io, snd_seq_addr_t a, char *name, size_t size)
{
	if (snd_seq_get_any_client_info(io->seq, a.client, io->cinfo) == 0 &&
	    snd_seq_get_any_port_info(io->seq, a.client, a.port, io->pinfo) == 0)
		snprintf(name, size, "%s:%s", snd_seq_client_info_get_name(io->cinfo),
			 snd_seq_port_info_get_name(io->pinfo));
	else
		snprintf(name, size, "%d:%d", a.client, a.port);
}

void alsa_report(struct midi_io *io, enum midi_io_event kind, int index, const char *name)
{
	if (io->cb.event)
		io->cb.event(io->cb.context, kind, index, name);
}

/* ---- sources ------------------------------------------------------------ */

int alsa_source_for(struct midi_io *io, snd_seq_addr_t a, bool subscribed)
{
	int id = source_ids_find(&io->sources, addr_key(a));
	if (id >= 0) {
		if (subscribed)
			io->subscribed[id] = true;
		return id;
	}
	char name[ADDR_NAME_MAX];
	addr_name(io, a, name, sizeof name);
	id = source_ids_add(&io->sources, addr_key(a), name);
	if (id < 0)
		return -1;
	io->subscribed[id] = subscribed;
	alsa_report(io, MIDI_IO_SOURCE_CONNECTED, id, name);
	return id;
}

static void source_gone(struct midi_io *io, int id)
{
	char name[SOURCE_NAME_MAX];
	snprintf(name, sizeof name, "%s", io->sources.name[id]);
	source_ids_remove(&io->sources, id);
	io->subscribed[id] = false;
	alsa_report(io, MIDI_IO_SOURCE_GONE, id, name);
}

/* Sources at this address (port < 0: anywhere in the client) are gone. */
static void sources_exit(struct midi_io *io, int client, int port)
{
	for (int id = 0; id < MIDI_IO_MAX_SOURCES; id++) {
		if (!io->sources.used[id])
			continue;
		uint32_t key = io->sources.key[id];
		if ((int)(key >> 8) == client && (port < 0 || (int)(key & 0xFF) == port))
			source_gone(io, id);
	}
}

/* ---- outputs ------------------------------------------------------------ */

static int query_subscribers(struct midi_io *io, int port, snd_seq_query_subs_type_t type,
			     snd_seq_addr_t *addrs, int max)
{
	snd_seq_addr_t root = { .client = (unsigned char)io->client, .port = (unsigned char)port };
	int n = 0;
	snd_seq_query_subscribe_set_root(io->query, &root);
	snd_seq_query_subscribe_set_type(io->query, type);
	snd_seq_query_subscribe_set_index(io->query, 0);
	while (n < max && snd_seq_query_port_subscribers(io->seq, io->query) >= 0) {
		addrs[n++] = *snd_seq_query_subscribe_get_addr(io->query);
		snd_seq_query_subscribe_set_index(io->query, snd_seq_query_subscribe_get_index(io->query) + 1);
	}
	return n;
}

static void output_refresh(struct midi_io *io, int index)
{
	struct alsa_output *o = &io->out[index];
	snd_seq_addr_t now[MAX_DESTINATIONS];
	struct destination next[MAX_DESTINATIONS];
	bool fresh[MAX_DESTINATIONS];
	int n = query_subscribers(io, o->port, SND_SEQ_QUERY_SUBS_READ, now, MAX_DESTINATIONS);

	for (int i = 0; i < n; i++) {
		next[i].addr = now[i];
		fresh[i] = true;
		for (int k = 0; k < o->count; k++) {
			if (addr_equal(o->dest[k].addr, now[i])) {
				memcpy(next[i].name, o->dest[k].name, sizeof next[i].name);
				fresh[i] = false;
				break;
			}
		}
		if (fresh[i])
			addr_name(io, now[i], next[i].name, sizeof next[i].name);
	}
	char last[ADDR_NAME_MAX] = "";
	bool had = o->count > 0;
	if (had)
		memcpy(last, o->dest[o->count - 1].name, sizeof last);
	memcpy(o->dest, next, sizeof next[0] * (size_t)n);
	o->count = n;
	for (int i = 0; i < n; i++)
		if (fresh[i])
			alsa_report(io, MIDI_IO_OUTPUT_CONNECTED, index, next[i].name);
	if (had && n == 0)
		alsa_report(io, MIDI_IO_OUTPUT_GONE, index, last);
}

static bool output_has_client(const struct alsa_output *o, int client, int port)
{
	for (int k = 0; k < o->count; k++)
		if (o->dest[k].addr.client == client && (port < 0 || o->dest[k].addr.port == port))
			return true;
	return false;
}

static int output_of_port(struct midi_io *io, int port)
{
	for (int i = 0; i < io->output_count; i++)
		if (io->out[i].port == port)
			return i;
	return -1;
}

/* ---- connections by pattern ------------------------------------------ */

static void try_connect(struct midi_io *io, int err)
{
	if (err < 0 && err != -EBUSY) {
		io->connect_failures++;
		io->last_connect_error = err;
	}
}

/* Connects the port described by io->pinfo (of the client named
 * client_name) wherever a pattern asks for it. */
static void connect_port(struct midi_io *io, const char *client_name)
{
	int client = snd_seq_port_info_get_client(io->pinfo);
	int port = snd_seq_port_info_get_port(io->pinfo);
	unsigned caps = snd_seq_port_info_get_capability(io->pinfo);
	const char *port_name = snd_seq_port_info_get_name(io->pinfo);

	if (client == SND_SEQ_CLIENT_SYSTEM || client == io->client)
		return;
	snd_seq_addr_t addr = {.client = (unsigned char)client, .port = (unsigned char)port};
	if ((caps & CAN_READ) == CAN_READ &&
	    alsa_port_matches(&io->spec.input, addr, client_name, port_name))
		try_connect(io, snd_seq_connect_from(io->seq, io->in_port, client, port));
	for (int i = 0; i < io->output_count; i++)
		if ((caps & CAN_WRITE) == CAN_WRITE &&
		    alsa_port_matches(&io->spec.outputs[i], addr, client_name, port_name))
			try_connect(io, snd_seq_connect_to(io->seq, io->out[i].port, client, port));
}

/* Every port of the client, or just one (port >= 0). */
static void connect_client(struct midi_io *io, int client, int port)
{
	char client_name[MIDI_IO_NAME_MAX + 1];

	if (client == SND_SEQ_CLIENT_SYSTEM || client == io->client)
		return;
	if (snd_seq_get_any_client_info(io->seq, client, io->cinfo) < 0)
		return;
	snprintf(client_name, sizeof client_name, "%s", snd_seq_client_info_get_name(io->cinfo));
	if (port >= 0) {
		if (snd_seq_get_any_port_info(io->seq, client, port, io->pinfo) == 0)
			connect_port(io, client_name);
		return;
	}
	snd_seq_port_info_set_client(io->pinfo, client);
	snd_seq_port_info_set_port(io->pinfo, -1);
	while (snd_seq_query_next_port(io->seq, io->pinfo) >= 0)
		connect_port(io, client_name);
}

void alsa_connect_everything(struct midi_io *io)
{
	/* io->cinfo is reused by connect_client, so walk with our own. */
	snd_seq_client_info_t *walk;
	if (snd_seq_client_info_malloc(&walk) < 0)
		return;
	snd_seq_client_info_set_client(walk, -1);
	while (snd_seq_query_next_client(io->seq, walk) >= 0)
		connect_client(io, snd_seq_client_info_get_client(walk), -1);
	snd_seq_client_info_free(walk);
}

/* ---- state rebuilt from the kernel -------------------------------------- */

void alsa_resync(struct midi_io *io)
{
	snd_seq_addr_t senders[256];
	int n = query_subscribers(io, io->in_port, SND_SEQ_QUERY_SUBS_WRITE, senders,
				  (int)(sizeof senders / sizeof senders[0]));

	for (int id = 0; id < MIDI_IO_MAX_SOURCES; id++) {
		if (!io->sources.used[id])
			continue;
		uint32_t key = io->sources.key[id];
		bool still = false;
		for (int i = 0; i < n; i++)
			still |= addr_key(senders[i]) == key;
		if (still)
			continue;
		/* Not subscribed (any more): keep it only while it is an
		 * unsubscribed writer whose port still exists. */
		if (io->subscribed[id] ||
		    snd_seq_get_any_port_info(io->seq, (int)(key >> 8), (int)(key & 0xFF), io->pinfo) < 0)
			source_gone(io, id);
	}
	for (int i = 0; i < n; i++)
		if (senders[i].client != SND_SEQ_CLIENT_SYSTEM)
			alsa_source_for(io, senders[i], true);
	for (int i = 0; i < io->output_count; i++)
		output_refresh(io, i);
	io->resync = false;
}

/* ---- notices -------------------------------------------------------------- */

static bool is_our_input(struct midi_io *io, snd_seq_addr_t a)
{
	return a.client == io->client && a.port == io->in_port;
}

static void subscription_notice(struct midi_io *io, const snd_seq_connect_t *c, bool subscribed)
{
	if (is_our_input(io, c->dest) && c->sender.client != SND_SEQ_CLIENT_SYSTEM) {
		if (subscribed) {
			alsa_source_for(io, c->sender, true);
		} else {
			int id = source_ids_find(&io->sources, addr_key(c->sender));
			if (id >= 0)
				source_gone(io, id);
		}
	}
	if (c->sender.client == io->client) {
		int i = output_of_port(io, c->sender.port);
		if (i >= 0)
			output_refresh(io, i);
	}
}

static void exit_notice(struct midi_io *io, int client, int port)
{
	sources_exit(io, client, port);
	for (int i = 0; i < io->output_count; i++)
		if (output_has_client(&io->out[i], client, port))
			output_refresh(io, i);
}

void alsa_handle_notice(struct midi_io *io, const snd_seq_event_t *ev)
{
	const snd_seq_addr_t *a = &ev->data.addr;

	switch (ev->type) {
	case SND_SEQ_EVENT_PORT_SUBSCRIBED:
		subscription_notice(io, &ev->data.connect, true);
		break;
	case SND_SEQ_EVENT_PORT_UNSUBSCRIBED:
		subscription_notice(io, &ev->data.connect, false);
		break;
	case SND_SEQ_EVENT_CLIENT_START:
	case SND_SEQ_EVENT_CLIENT_CHANGE:
		/* A client usually gets its name after it starts and its
		 * ports after that; each step may make a pattern match. */
		connect_client(io, a->client, -1);
		break;
	case SND_SEQ_EVENT_PORT_START:
	case SND_SEQ_EVENT_PORT_CHANGE:
		connect_client(io, a->client, a->port);
		break;
	case SND_SEQ_EVENT_PORT_EXIT:
		exit_notice(io, a->client, a->port);
		break;
	case SND_SEQ_EVENT_CLIENT_EXIT:
		exit_notice(io, a->client, -1);
		break;
	default:
		break;
	}
}
