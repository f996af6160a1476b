/*
 * alsa_connect: `latticed connect SRC DST` on the ALSA sequencer, a
 * subscription from one port to another made on their behalf (a
 * third-party subscription, as the sequencer's own patch tools make).
 *
 * Each side is found by name: a pattern as in a config's connect list
 * (the whole "client:port", the client or the port, with * and ?) or a
 * client:port number.  SRC must be a port others may read from (a
 * keyboard, latticed's output), DST one others may write to (a synth,
 * latticed's input).  A side that matches no port, or more than one, is
 * refused with the candidates listed, so a pattern never connects a port
 * nobody meant (a bare * would match latticed's own ports too).
 *
 * Why this exists: alsa-utils' aconnect resolves "latticed:synth" by its
 * client name but reads the part after the colon as a port number, so it
 * takes port 0, latticed's input, and the kernel refuses the connection.
 */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <alsa/asoundlib.h>

#include "alsa_connect.h"
#include "midi_io.h"

#define MAX_FOUND 8
#define NAME_MAX_ (2 * MIDI_IO_NAME_MAX + 2)
#define CAN_READ (SND_SEQ_PORT_CAP_READ | SND_SEQ_PORT_CAP_SUBS_READ)
#define CAN_WRITE (SND_SEQ_PORT_CAP_WRITE | SND_SEQ_PORT_CAP_SUBS_WRITE)

struct found {
	int count;                      /* matches, even beyond MAX_FOUND */
	snd_seq_addr_t addr[MAX_FOUND];
	char name[MAX_FOUND][NAME_MAX_];
	int offered;                    /* ports with the capability at all */
	char offer[MAX_FOUND][NAME_MAX_];
};

/* "12:3" (digits, a colon, digits) into an address; false for a name. */
static bool parse_address(const char *text, snd_seq_addr_t *out)
{
	char *end;
	errno = 0;
	long client = strtol(text, &end, 10);
	if (end == text || *end != ':' || client < 0 || client > 255)
		return false;
	const char *p = end + 1;
	long port = strtol(p, &end, 10);
	if (end == p || *end != '\0' || errno || port < 0 || port > 255)
		return false;
	out->client = (unsigned char)client;
	out->port = (unsigned char)port;
	return true;
}

bool alsa_port_matches(const struct midi_io_port_spec *spec, snd_seq_addr_t addr,
		       const char *client, const char *port)
{
	for (int i = 0; i < spec->connect_count; i++) {
		snd_seq_addr_t number;
		if (parse_address(spec->connect[i], &number) && number.client == addr.client &&
		    number.port == addr.port)
			return true;
	}
	return midi_io_matches(spec, client, port);
}

/* Every port with capability `caps` that pattern names, into *f; false
 * when out of memory. */
static bool find_ports(snd_seq_t *seq, const char *pattern, unsigned caps, struct found *f)
{
	snd_seq_client_info_t *cinfo = NULL;
	snd_seq_port_info_t *pinfo = NULL;
	struct midi_io_port_spec spec = {.connect_count = 1};
	snprintf(spec.connect[0], sizeof spec.connect[0], "%s", pattern);
	memset(f, 0, sizeof *f);
	if (snd_seq_client_info_malloc(&cinfo) < 0 || snd_seq_port_info_malloc(&pinfo) < 0) {
		if (cinfo)
			snd_seq_client_info_free(cinfo);
		return false;
	}
	snd_seq_client_info_set_client(cinfo, -1);
	while (snd_seq_query_next_client(seq, cinfo) >= 0) {
		int client = snd_seq_client_info_get_client(cinfo);
		if (client == SND_SEQ_CLIENT_SYSTEM || client == snd_seq_client_id(seq))
			continue;
		snd_seq_port_info_set_client(pinfo, client);
		snd_seq_port_info_set_port(pinfo, -1);
		while (snd_seq_query_next_port(seq, pinfo) >= 0) {
			if ((snd_seq_port_info_get_capability(pinfo) & caps) != caps)
				continue;
			snd_seq_addr_t a = {.client = (unsigned char)client,
					    .port = (unsigned char)snd_seq_port_info_get_port(pinfo)};
			char name[NAME_MAX_];
			snprintf(name, sizeof name, "%s:%s (%d:%d)", snd_seq_client_info_get_name(cinfo),
				 snd_seq_port_info_get_name(pinfo), a.client, a.port);
			if (f->offered < MAX_FOUND)
				snprintf(f->offer[f->offered], NAME_MAX_, "%s", name);
			f->offered++;
			if (!alsa_port_matches(&spec, a, snd_seq_client_info_get_name(cinfo),
					       snd_seq_port_info_get_name(pinfo)))
				continue;
			if (f->count < MAX_FOUND) {
				f->addr[f->count] = a;
				snprintf(f->name[f->count], NAME_MAX_, "%s", name);
			}
			f->count++;
		}
	}
	snd_seq_port_info_free(pinfo);
	snd_seq_client_info_free(cinfo);
	return true;
}

/* names[0..shown) of count, "a, b, c and 4 more" */
static void list_names(char *buf, size_t size, char (*names)[NAME_MAX_], int count)
{
	buf[0] = '\0';
	int shown = count < MAX_FOUND ? count : MAX_FOUND;
	for (int i = 0; i < shown; i++)
		midi_io_appendf(buf, size, "%s%s", i ? ", " : "", names[i]);
	if (count > shown)
		midi_io_appendf(buf, size, " and %d more", count - shown);
}

/* The one port a side names, or false with err saying why there is none. */
static bool one_port(snd_seq_t *seq, const char *pattern, bool sends, snd_seq_addr_t *addr,
		     char *name, char *err, size_t err_size)
{
	struct found f;
	if (!find_ports(seq, pattern, sends ? CAN_READ : CAN_WRITE, &f)) {
		snprintf(err, err_size, "out of memory");
		return false;
	}
	const char *role = sends ? "sends (a keyboard, latticed's output)" :
				   "receives (a synth, latticed:in)";
	char list[MAX_FOUND * (NAME_MAX_ + 2) + 32];
	if (f.count == 1) {
		*addr = f.addr[0];
		snprintf(name, NAME_MAX_, "%s", f.name[0]);
		return true;
	}
	if (f.count == 0) {
		list_names(list, sizeof list, f.offer, f.offered);
		snprintf(err, err_size, "no port that %s matches '%s'; such ports: %s", role, pattern,
			 f.offered ? list : "none");
		return false;
	}
	list_names(list, sizeof list, f.name, f.count);
	snprintf(err, err_size, "'%s' matches %d ports that %s: %s; expected one: give more of its name or its client:port number",
		 pattern, f.count, sends ? "send" : "receive", list);
	return false;
}

bool alsa_connect(const char *from, const char *to, bool undo, midi_io_line_fn line,
		  void *context, char *err, size_t err_size)
{
	snd_seq_t *seq;
	int r = alsa_seq_open(&seq);
	if (r < 0) {
		alsa_seq_open_error(r, err, err_size);
		return false;
	}
	snd_seq_set_client_name(seq, "latticed connect");
	snd_seq_addr_t sender, dest;
	char sender_name[NAME_MAX_], dest_name[NAME_MAX_];
	bool ok = one_port(seq, from, true, &sender, sender_name, err, err_size) &&
		  one_port(seq, to, false, &dest, dest_name, err, err_size);
	snd_seq_port_subscribe_t *sub = NULL;
	if (ok && snd_seq_port_subscribe_malloc(&sub) < 0) {
		snprintf(err, err_size, "out of memory");
		ok = false;
	}
	if (ok) {
		snd_seq_port_subscribe_set_sender(sub, &sender);
		snd_seq_port_subscribe_set_dest(sub, &dest);
		bool was = snd_seq_get_port_subscription(seq, sub) == 0;
		char text[3 * NAME_MAX_];
		if (was == !undo) {
			snprintf(text, sizeof text, "%s %s -> %s", undo ? "not connected:" : "already connected:",
				 sender_name, dest_name);
			line(context, text);
		} else if ((r = undo ? snd_seq_unsubscribe_port(seq, sub) : snd_seq_subscribe_port(seq, sub)) < 0) {
			snprintf(err, err_size, "the sequencer refused to %s %s %s %s: %s",
				 undo ? "disconnect" : "connect", sender_name, undo ? "from" : "to", dest_name,
				 snd_strerror(r));
			ok = false;
		} else {
			snprintf(text, sizeof text, "%s %s -> %s", undo ? "disconnected" : "connected",
				 sender_name, dest_name);
			line(context, text);
		}
	}
	if (sub)
		snd_seq_port_subscribe_free(sub);
	snd_seq_close(seq);
	return ok;
}
