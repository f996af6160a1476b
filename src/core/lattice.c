/*
 * lattice: builds a combination product set and its chords.
 *
 * Subsets of seeds are bit masks, enumerated in lexicographic order of
 * their seed positions (1.3 before 1.5 before 3.5), so "the first product"
 * of a merged tone is the one a person would list first, and chords come
 * out in the order people write them.  Every product is kept reduced into the period after each
 * multiplication, which keeps the terms small (the reduced value of a
 * product never needs more than the seeds' own digits plus the period's
 * powers) and makes overflow a real property of the set, not of the order
 * of operations.
 */
#include "latticed/lattice.h"

#include <stdio.h>
#include <string.h>

#define MASK_SPACE (1u << LATTICE_MAX_SEEDS)

int64_t binomial(int n, int k)
{
	if (k < 0 || n < 0 || k > n || n > 62)
		return 0;
	if (k > n - k)
		k = n - k;
	int64_t c = 1;
	for (int i = 1; i <= k; i++)
		c = c * (n - k + i) / i; /* exact: c*(n-k+i) is divisible by i */
	return c;
}

static int popcount16(unsigned v)
{
	return __builtin_popcount(v & 0xFFFFu);
}

/*
 * Lexicographic walk over the size-k subsets of n seeds.  `index` holds the
 * current subset's positions; returns its mask, or -1 when done.
 */
struct subset_walk {
	int n, k;
	int index[LATTICE_MAX_SEEDS];
	bool started, done;
};

static void subset_walk_init(struct subset_walk *w, int n, int k)
{
	w->n = n;
	w->k = k;
	w->started = false;
	w->done = k < 0 || k > n;
	for (int i = 0; i < k && i < LATTICE_MAX_SEEDS; i++)
		w->index[i] = i;
}

static int subset_walk_next(struct subset_walk *w)
{
	if (w->done)
		return -1;
	if (w->started) {
		int i = w->k - 1;
		while (i >= 0 && w->index[i] == w->n - w->k + i)
			i--;
		if (i < 0) {
			w->done = true;
			return -1;
		}
		w->index[i]++;
		for (int j = i + 1; j < w->k; j++)
			w->index[j] = w->index[j - 1] + 1;
	}
	w->started = true;
	int mask = 0;
	for (int i = 0; i < w->k; i++)
		mask |= 1 << w->index[i];
	return mask;
}

/* A seed written as a ratio sits in parentheses inside a label, so "1.(9/8)"
 * cannot be read as the decimal 1.9 over 8. */
static bool seed_needs_parentheses(const char *text)
{
	return strchr(text, '/') != NULL;
}

char *lattice_label(const struct lattice_spec *spec, uint16_t seeds,
		    char *buf, size_t size)
{
	size_t used = 0;
	buf[0] = '\0';
	for (int i = 0; i < spec->seed_count; i++) {
		if (!(seeds & (1u << i)))
			continue;
		bool wrap = seed_needs_parentheses(spec->seed_text[i]);
		int n = snprintf(buf + used, size - used, "%s%s%s%s", used ? "." : "",
				 wrap ? "(" : "", spec->seed_text[i], wrap ? ")" : "");
		if (n < 0 || (size_t)n >= size - used)
			break;
		used += (size_t)n;
	}
	return buf;
}

bool lattice_parse_label(const struct lattice_spec *spec, const char *text,
			 uint16_t *mask)
{
	uint16_t m = 0;
	const char *p = text;
	for (;;) {
		const char *dot = strchr(p, '.');
		size_t len = dot ? (size_t)(dot - p) : strlen(p);
		/* "(9/8)" or the bare "9/8" of older configs: seed texts hold no '.' */
		if (len >= 2 && p[0] == '(' && p[len - 1] == ')') {
			p++;
			len -= 2;
		}
		int found = -1;
		for (int i = 0; i < spec->seed_count && found < 0; i++) {
			if (m & (1u << i))
				continue;
			if (strlen(spec->seed_text[i]) == len &&
			    strncmp(spec->seed_text[i], p, len) == 0)
				found = i;
		}
		if (found < 0)
			return false;
		m |= (uint16_t)(1u << found);
		if (!dot)
			break;
		p = dot + 1;
	}
	*mask = m;
	return true;
}

/* The product of the seeds in mask, reduced into one period as it grows so
 * the terms stay small; on overflow *in_period says whether the reduction
 * (not the product itself) overflowed. */
static bool product_of(const struct lattice_spec *spec, uint16_t mask,
		       struct ratio *out, bool *in_period)
{
	struct ratio acc = {1, 1};
	*in_period = false;
	for (int i = 0; i < spec->seed_count; i++) {
		if (!(mask & (1u << i)))
			continue;
		if (!ratio_mul(acc, spec->seeds[i], &acc))
			return false;
		if (!ratio_reduce_into(acc, spec->period, &acc, NULL)) {
			*in_period = true;
			return false;
		}
	}
	*out = acc;
	return true;
}

static bool validate(const struct lattice_spec *spec, struct core_error *err)
{
	const struct ratio one = {1, 1};
	int n = spec->seed_count;
	if (n < 2 || n > LATTICE_MAX_SEEDS)
		return core_fail(err, "seeds",
				 "%d seeds given, expected 2 to %d", n,
				 LATTICE_MAX_SEEDS);
	for (int i = 0; i < n; i++) {
		if (spec->seeds[i].num <= 0 || spec->seeds[i].den <= 0)
			return core_fail(err, "seeds",
					 "seed %d is not positive, expected a positive whole number or ratio",
					 i + 1);
	}
	if (spec->choose < 1 || spec->choose >= n)
		return core_fail(err, "choose",
				 "choose is %d, expected a whole number from 1 to %d (less than the %d seeds)",
				 spec->choose, n - 1, n);
	if (ratio_cmp(spec->period, one) <= 0)
		return core_fail(err, "period",
				 "period is not above 1/1, expected a ratio greater than 1 such as 2/1 or 3/1");
	if (spec->has_unison && popcount16(spec->unison_seeds) != spec->choose)
		return core_fail(err, "unison",
				 "unison names %d seeds, expected %d (one tone of the set)",
				 popcount16(spec->unison_seeds), spec->choose);
	if (spec->has_unison && (spec->unison_seeds >> n) != 0)
		return core_fail(err, "unison", "unison names a seed that does not exist");
	return true;
}

struct product {
	struct ratio ratio;
	uint16_t seeds;
};

/* Insertion sort: stable (equal ratios keep mask order) and n <= 924. */
static void sort_products(struct product *p, int count)
{
	for (int i = 1; i < count; i++) {
		struct product key = p[i];
		int j = i - 1;
		while (j >= 0 && ratio_cmp(p[j].ratio, key.ratio) > 0) {
			p[j + 1] = p[j];
			j--;
		}
		p[j + 1] = key;
	}
}

static int64_t gcd_i64(int64_t a, int64_t b)
{
	if (a < 0)
		a = -a;
	if (b < 0)
		b = -b;
	while (b != 0) {
		int64_t t = a % b;
		a = b;
		b = t;
	}
	return a;
}

/*
 * Orders the chord's tones into closest position and fills the proportion.
 * tones[] arrives sorted by ratio within the period (tone indices are
 * sorted by ratio, so sorting indices is enough).
 */
static void chord_settle(struct chord *c, const struct lattice *lat)
{
	int m = c->tone_count;
	struct ratio period = lat->spec.period;
	struct ratio best_span = {0, 1};
	int best = 0;
	for (int j = 0; j < m; j++) {
		/* inversion starting at tone j: the tones below it move up a period */
		struct ratio low = lat->tones[c->tones[j]].ratio;
		struct ratio high = lat->tones[c->tones[(j + m - 1) % m]].ratio;
		struct ratio span;
		if (j > 0 && !ratio_mul(high, period, &high))
			continue;
		if (!ratio_div(high, low, &span))
			continue;
		if (best_span.num == 0 || ratio_cmp(span, best_span) < 0) {
			best_span = span;
			best = j;
		}
	}
	int16_t ordered[LATTICE_MAX_CHORD_TONES];
	struct ratio values[LATTICE_MAX_CHORD_TONES];
	c->proportion_ok = true;
	for (int i = 0; i < m; i++) {
		int src = (best + i) % m;
		ordered[i] = c->tones[src];
		values[i] = lat->tones[ordered[i]].ratio;
		if (src < best && !ratio_mul(values[i], period, &values[i]))
			c->proportion_ok = false;
	}
	memcpy(c->tones, ordered, sizeof(ordered[0]) * (size_t)m);
	if (!c->proportion_ok)
		return;
	/* divide by the lowest, scale by the lcm of denominators, cancel the gcd */
	int64_t lcm = 1;
	struct ratio lowest = values[0];
	for (int i = 0; i < m && c->proportion_ok; i++) {
		struct ratio rel;
		if (!ratio_div(values[i], lowest, &rel)) {
			c->proportion_ok = false;
			break;
		}
		values[i] = rel;
		int64_t g = gcd_i64(lcm, rel.den);
		if (__builtin_mul_overflow(lcm / g, rel.den, &lcm))
			c->proportion_ok = false;
	}
	int64_t common = 0;
	for (int i = 0; i < m && c->proportion_ok; i++) {
		if (__builtin_mul_overflow(values[i].num, lcm / values[i].den,
					   &c->proportion[i]))
			c->proportion_ok = false;
		common = gcd_i64(common, c->proportion[i]);
	}
	if (!c->proportion_ok || common == 0)
		return;
	for (int i = 0; i < m; i++)
		c->proportion[i] /= common;
}

static void sort_indices(int16_t *v, int count)
{
	for (int i = 1; i < count; i++) {
		int16_t key = v[i];
		int j = i - 1;
		while (j >= 0 && v[j] > key) {
			v[j + 1] = v[j];
			j--;
		}
		v[j + 1] = key;
	}
}

static void add_chord(struct lattice *lat, enum chord_kind kind,
		      uint16_t seeds, const int16_t *members, int count)
{
	struct chord *c = &lat->chords[lat->chord_count++];
	memset(c, 0, sizeof *c);
	c->kind = kind;
	c->seeds = seeds;
	for (int i = 0; i < count; i++) {
		bool seen = false;
		for (int j = 0; j < c->tone_count; j++)
			seen = seen || c->tones[j] == members[i];
		if (!seen)
			c->tones[c->tone_count++] = members[i];
	}
	sort_indices(c->tones, c->tone_count);
	chord_settle(c, lat);
}

/*
 * A product that cannot be brought into one period: each division by the
 * period multiplies the denominator, so a period close to 1/1 (such as
 * 1000001/1000000) overflows before the product is reduced; the message
 * blames the period (its line, in a config), and the seeds second.
 */
static bool period_fail(const struct lattice_spec *spec, uint16_t mask, struct core_error *err)
{
	char label[LATTICE_LABEL_MAX], period[RATIO_TEXT_MAX];
	return core_fail(err, "period",
			 "reducing the product %s into the period %s overflows 64-bit exact arithmetic, expected a period further from 1/1 (such as 2/1) or smaller seeds",
			 lattice_label(spec, mask, label, sizeof label),
			 ratio_format(spec->period, period, sizeof period));
}

/* The product of mask over the unison, reduced into one period. */
static bool tone_ratio(const struct lattice_spec *spec, uint16_t mask, struct ratio unison,
		       struct ratio *out, struct core_error *err)
{
	char label[LATTICE_LABEL_MAX];
	bool in_period = false;
	struct ratio r;
	bool ok = product_of(spec, mask, &r, &in_period) && ratio_div(r, unison, &r);
	if (ok && !ratio_reduce_into(r, spec->period, &r, NULL)) {
		ok = false;
		in_period = true;
	}
	if (!ok && in_period)
		return period_fail(spec, mask, err);
	if (!ok)
		return core_fail(err, "seeds",
				 "the product %s overflows 64-bit exact arithmetic; use smaller seeds",
				 lattice_label(spec, mask, label, sizeof label));
	*out = r;
	return true;
}

bool lattice_build(struct lattice *out, const struct lattice_spec *spec,
		   struct core_error *err)
{
	if (!validate(spec, err))
		return false;

	struct lattice *lat = out;
	memset(lat, 0, sizeof *lat);
	lat->spec = *spec;
	int n = spec->seed_count, k = spec->choose;

	struct ratio unison = {1, 1};
	bool unused;
	if (spec->has_unison && !product_of(spec, spec->unison_seeds, &unison, &unused))
		return core_fail(err, "unison",
				 "the unison product overflows 64-bit exact arithmetic");

	struct product products[LATTICE_MAX_TONES];
	int count = 0;
	struct subset_walk walk;
	subset_walk_init(&walk, n, k);
	for (int mask; (mask = subset_walk_next(&walk)) >= 0; count++) {
		products[count].seeds = (uint16_t)mask;
		if (!tone_ratio(spec, (uint16_t)mask, unison, &products[count].ratio, err))
			return false;
	}
	sort_products(products, count);

	int16_t tone_of_mask[MASK_SPACE];
	for (int i = 0; i < count; i++) {
		struct product *p = &products[i];
		if (lat->tone_count > 0 &&
		    ratio_equal(lat->tones[lat->tone_count - 1].ratio, p->ratio)) {
			int t = lat->tone_count - 1;
			lat->tones[t].merged_count++;
			lat->merges[lat->merge_count].seeds = p->seeds;
			lat->merges[lat->merge_count].tone = (int16_t)t;
			lat->merge_count++;
			tone_of_mask[p->seeds] = (int16_t)t;
			continue;
		}
		struct tone *t = &lat->tones[lat->tone_count];
		t->ratio = p->ratio;
		t->cents = ratio_cents(p->ratio);
		t->seeds = p->seeds;
		tone_of_mask[p->seeds] = (int16_t)lat->tone_count;
		lat->tone_count++;
	}

	int16_t members[LATTICE_MAX_CHORD_TONES];
	subset_walk_init(&walk, n, k - 1);
	for (int s; (s = subset_walk_next(&walk)) >= 0;) {
		int m = 0;
		for (int x = 0; x < n; x++)
			if (!(s & (1u << x)))
				members[m++] = tone_of_mask[s | (1u << x)];
		add_chord(lat, CHORD_HARMONIC, (uint16_t)s, members, m);
	}
	lat->harmonic_count = lat->chord_count;
	subset_walk_init(&walk, n, k + 1);
	for (int t; (t = subset_walk_next(&walk)) >= 0;) {
		int m = 0;
		for (int x = 0; x < n; x++)
			if (t & (1u << x))
				members[m++] = tone_of_mask[t & ~(1u << x)];
		add_chord(lat, CHORD_SUBHARMONIC, (uint16_t)t, members, m);
	}
	return true;
}

int lattice_find_tone(const struct lattice *lat, const char *text)
{
	uint16_t mask;
	if (!lattice_parse_label(&lat->spec, text, &mask))
		return -1;
	for (int i = 0; i < lat->tone_count; i++)
		if (lat->tones[i].seeds == mask)
			return i;
	for (int i = 0; i < lat->merge_count; i++)
		if (lat->merges[i].seeds == mask)
			return lat->merges[i].tone;
	return -1;
}
