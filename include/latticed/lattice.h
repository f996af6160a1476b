/*
 * lattice: a combination product set (CPS) and its chords.
 *
 * Model: n seeds s_0..s_{n-1} (positive ratios), a choice k and a period
 * P > 1.  Every k-subset of the seeds gives one product; each product is
 * reduced into [1, P) and, optionally, divided by a chosen member so that
 * member becomes 1/1.  Products that land on the same ratio are one tone
 * (a merge, reported to the caller).  Tones are sorted by size; tone 0 is
 * the lowest.
 *
 * A subset of seeds is a bit mask (bit i = seed i), which is also how a
 * tone remembers where it came from: its label joins the seed texts with
 * '.', e.g. "3.7", a seed written as a ratio in parentheses, e.g.
 * "1.(9/8)" (bare, "1.9/8" reads as a decimal divided by 8).
 *
 * Chords are the two families of a CPS:
 *   harmonic    for every (k-1)-subset S: the tones S+{x}, x not in S
 *               (C(n,k-1) chords of n-k+1 tones; they share S);
 *   subharmonic for every (k+1)-subset T: the tones T-{x}, x in T
 *               (C(n,k+1) chords of k+1 tones; they lie inside T).
 * Each chord is stored in its closest position: of its inversions within
 * one period, the one spanning the smallest interval, as an integer
 * proportion in lowest terms (4:5:6).
 *
 * The whole structure is fixed-size so it can be built once at set-up and
 * read without allocation afterwards.
 */
#ifndef LATTICED_LATTICE_H
#define LATTICED_LATTICE_H

#include <stdbool.h>
#include <stdint.h>

#include "latticed/error.h"
#include "latticed/ratio.h"

#define LATTICE_MAX_SEEDS 12
#define LATTICE_MAX_TONES 924          /* C(12,6) */
#define LATTICE_MAX_CHORDS (2 * 924)   /* C(12,k-1) + C(12,k+1) <= 1848 */
#define LATTICE_MAX_CHORD_TONES 12
#define LATTICE_SEED_TEXT_MAX 24
/* Longest tone label: 12 seed texts in parentheses and 11 dots. */
#define LATTICE_LABEL_MAX (LATTICE_MAX_SEEDS * (LATTICE_SEED_TEXT_MAX + 2))

struct lattice_spec {
	int seed_count;
	struct ratio seeds[LATTICE_MAX_SEEDS];
	/* how each seed is written in labels ("7", "9/8") */
	char seed_text[LATTICE_MAX_SEEDS][LATTICE_SEED_TEXT_MAX];
	int choose;                 /* k */
	struct ratio period;        /* P, > 1 */
	bool has_unison;            /* normalise so that one member is 1/1 */
	uint16_t unison_seeds;      /* that member, as a k-seed mask */
};

struct tone {
	struct ratio ratio;         /* in [1, P), lowest terms */
	double cents;               /* 1200 log2(ratio) */
	uint16_t seeds;             /* the first product that made this tone */
	int16_t merged_count;       /* further products that coincided with it */
};

enum chord_kind { CHORD_HARMONIC, CHORD_SUBHARMONIC };

struct chord {
	enum chord_kind kind;
	uint16_t seeds;             /* harmonic: the shared (k-1)-subset;
				       subharmonic: the enclosing (k+1)-subset */
	int tone_count;             /* distinct tones (merges can shrink it) */
	int16_t tones[LATTICE_MAX_CHORD_TONES]; /* closest position, low to high */
	int64_t proportion[LATTICE_MAX_CHORD_TONES];
	bool proportion_ok;         /* false if the integers overflowed 64 bits */
};

/* One product that coincided with an earlier one and joined its tone. */
struct lattice_merge {
	uint16_t seeds;
	int16_t tone;
};

struct lattice {
	struct lattice_spec spec;
	int tone_count;
	struct tone tones[LATTICE_MAX_TONES];
	int chord_count;
	int harmonic_count;         /* chords[0 .. harmonic_count-1] are harmonic */
	struct chord chords[LATTICE_MAX_CHORDS];
	int merge_count;
	struct lattice_merge merges[LATTICE_MAX_TONES];
};

/* C(n, k) for 0 <= k <= n <= 62; 0 outside that range. */
int64_t binomial(int n, int k);

/*
 * Builds the set.  Fails (false, err filled) on bad spec values or when an
 * exact product overflows 64 bits; never partially fills a usable result.
 */
bool lattice_build(struct lattice *out, const struct lattice_spec *spec,
		   struct core_error *err);

/* "3.7"-style label of a seed mask ("1.(9/8)" for a ratio seed), written
 * into buf; returns buf. */
char *lattice_label(const struct lattice_spec *spec, uint16_t seeds,
		    char *buf, size_t size);

/*
 * Parses a label ("3.7", seeds joined by '.'; a ratio seed in parentheses,
 * "1.(9/8)", or bare, "1.9/8") into a mask using the spec's seed texts; a
 * repeated text picks the next seed written that way.
 * Returns false when a part names no seed.
 */
bool lattice_parse_label(const struct lattice_spec *spec, const char *text,
			 uint16_t *mask);

/* Index of the tone whose product label is text (merged labels count), or -1. */
int lattice_find_tone(const struct lattice *lat, const char *text);

#endif
