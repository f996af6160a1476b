/*
 * pmcheck: checks that PortMidi works on the machine it runs on, the way
 * latticed's PortMidi backend will use it.
 *
 *   pmcheck list                       every device PortMidi offers
 *   pmcheck loop [--out NAME] [--in NAME] [--seconds S]
 *       opens the output and the input device of those names (default
 *       "Midi Through Port-0" for both: the kernel's loopback port), sends
 *       a few channel messages and a SysEx, and checks that the same bytes
 *       come back in the same order.
 *
 * Devices are picked by name, never by number: the numbering depends on
 * which sequencer clients exist.  Exit status: 0 success, 1 failure,
 * 2 bad command line.
 */
#include <portmidi.h>
#include <porttime.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define EXIT_FAIL 1
#define EXIT_USAGE 2
#define MAX_BYTES 512

static void list(void)
{
	int n = Pm_CountDevices();

	printf("# id\tinterface\tdirection\tname\n");
	for (int i = 0; i < n; i++) {
		const PmDeviceInfo *d = Pm_GetDeviceInfo(i);
		printf("%d\t%s\t%s\t%s\n", i, d->interf, d->input ? (d->output ? "in+out" : "in") : "out", d->name);
	}
}

static PmDeviceID find(const char *name, bool input)
{
	int n = Pm_CountDevices();

	for (int i = 0; i < n; i++) {
		const PmDeviceInfo *d = Pm_GetDeviceInfo(i);
		if (!strcmp(d->name, name) && (input ? d->input : d->output))
			return i;
	}
	fprintf(stderr, "pmcheck: no PortMidi %s device named '%s'; the devices are:\n", input ? "input" : "output",
		name);
	list();
	exit(EXIT_FAIL);
}

static void check(PmError err, const char *what)
{
	if (err < 0) {
		fprintf(stderr, "pmcheck: %s: %s\n", what, Pm_GetErrorText(err));
		exit(EXIT_FAIL);
	}
}

/* Data bytes after a channel or system status byte (MIDI 1.0). */
static int data_count(unsigned s)
{
	if (s < 0xF0)
		return (s & 0xE0) == 0xC0 ? 1 : 2;
	return s == 0xF2 ? 2 : (s == 0xF1 || s == 0xF3) ? 1 : 0;
}

static void dump(const char *label, const unsigned char *b, int n)
{
	fprintf(stderr, "  %s (%d bytes):", label, n);
	for (int i = 0; i < n; i++)
		fprintf(stderr, " %02X", b[i]);
	fputc('\n', stderr);
}

static int loop(const char *out_name, const char *in_name, int seconds)
{
	/* Channel messages (MIDI 1.0): Note On, Note On with velocity 0 (stays a
	 * Note On), Note Off, CC 7, pitch bend at centre and at top, Program Change. */
	static const unsigned char channel[][3] = {
		{ 0x90, 0x3C, 0x64 }, { 0x90, 0x3C, 0x00 }, { 0x80, 0x3E, 0x40 }, { 0xB1, 0x07, 0x64 },
		{ 0xE0, 0x00, 0x40 }, { 0xE0, 0x7F, 0x7F }, { 0xC2, 0x05, 0x00 },
	};
	unsigned char sysex[40];
	unsigned char want[MAX_BYTES], got[MAX_BYTES];
	int nwant = 0, ngot = 0;
	PortMidiStream *in, *out;

	sysex[0] = 0xF0;
	sysex[1] = 0x7D; /* manufacturer ID 7D: non-commercial use (MIDI 1.0) */
	for (int i = 2; i < (int)sizeof(sysex) - 1; i++)
		sysex[i] = (unsigned char)(i & 0x7F);
	sysex[sizeof(sysex) - 1] = 0xF7;

	check(Pt_Start(1, NULL, NULL) == ptNoError ? pmNoError : pmHostError, "cannot start PortTime");
	PmDeviceID oid = find(out_name, false), iid = find(in_name, true);
	check(Pm_OpenInput(&in, iid, NULL, 512, NULL, NULL), "cannot open the input");
	check(Pm_SetFilter(in, PM_FILT_ACTIVE | PM_FILT_CLOCK), "cannot set the input filter");
	check(Pm_OpenOutput(&out, oid, NULL, 512, NULL, NULL, 0), "cannot open the output");

	for (size_t i = 0; i < sizeof(channel) / sizeof(channel[0]); i++) {
		const unsigned char *m = channel[i];
		int len = 1 + data_count(m[0]);
		check(Pm_WriteShort(out, 0, Pm_Message(m[0], m[1], m[2])), "cannot send");
		memcpy(want + nwant, m, (size_t)len);
		nwant += len;
	}
	check(Pm_WriteSysEx(out, 0, sysex), "cannot send the SysEx");
	memcpy(want + nwant, sysex, sizeof(sysex));
	nwant += (int)sizeof(sysex);

	/* Back to bytes: a SysEx comes four bytes per PmEvent until its F7. */
	bool in_sysex = false;
	PtTimestamp deadline = Pt_Time() + seconds * 1000;
	while (ngot < nwant && Pt_Time() < deadline) {
		PmEvent ev[64];
		if (Pm_Poll(in) != TRUE) {
			Pt_Sleep(1);
			continue;
		}
		int n = Pm_Read(in, ev, 64);
		check(n, "cannot read");
		for (int i = 0; i < n; i++) {
			PmMessage m = ev[i].message;
			unsigned char b[4] = { (unsigned char)(m & 0xFF), (unsigned char)((m >> 8) & 0xFF),
					       (unsigned char)((m >> 16) & 0xFF), (unsigned char)((m >> 24) & 0xFF) };
			int len = in_sysex || b[0] == 0xF0 ? 4 : 1 + data_count(b[0]);
			if (b[0] == 0xF0)
				in_sysex = true;
			for (int k = 0; k < len && ngot < MAX_BYTES; k++) {
				got[ngot++] = b[k];
				if (in_sysex && b[k] == 0xF7) {
					in_sysex = false;
					break;
				}
			}
		}
	}
	Pm_Close(out);
	Pm_Close(in);
	if (ngot != nwant || memcmp(want, got, (size_t)nwant)) {
		fprintf(stderr, "pmcheck: what came back from '%s' differs from what was sent to '%s':\n", in_name,
			out_name);
		dump("sent", want, nwant);
		dump("received", got, ngot);
		return EXIT_FAIL;
	}
	printf("pmcheck: %d bytes (7 channel messages, a %zu-byte SysEx) sent to '%s' came back from '%s'\n", nwant,
	       sizeof(sysex), out_name, in_name);
	return 0;
}

int main(int argc, char **argv)
{
	const char *out_name = "Midi Through Port-0", *in_name = "Midi Through Port-0";
	int seconds = 3, status = 0;

	if (argc < 2 || (strcmp(argv[1], "list") && strcmp(argv[1], "loop"))) {
		fprintf(stderr, "usage: pmcheck list | pmcheck loop [--out NAME] [--in NAME] [--seconds S]\n");
		return EXIT_USAGE;
	}
	for (int i = 2; i < argc; i++) {
		if (!strcmp(argv[i], "--out") && i + 1 < argc && !strcmp(argv[1], "loop"))
			out_name = argv[++i];
		else if (!strcmp(argv[i], "--in") && i + 1 < argc && !strcmp(argv[1], "loop"))
			in_name = argv[++i];
		else if (!strcmp(argv[i], "--seconds") && i + 1 < argc && !strcmp(argv[1], "loop"))
			seconds = atoi(argv[++i]);
		else {
			fprintf(stderr, "pmcheck: unexpected argument '%s'\n", argv[i]);
			return EXIT_USAGE;
		}
	}
	if (seconds < 1)
		seconds = 1;
	check(Pm_Initialize(), "cannot initialise PortMidi");
	if (!strcmp(argv[1], "list"))
		list();
	else
		status = loop(out_name, in_name, seconds);
	Pm_Terminate();
	return status;
}
