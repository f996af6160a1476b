/*
 * ratio: exact positive-or-negative rationals with 64-bit terms.
 *
 * Just intonation lives on exact fractions, so every interval latticed
 * builds is a struct ratio kept in lowest terms with a positive
 * denominator.  Arithmetic never wraps: each operation reduces by common
 * factors before multiplying and reports overflow by returning false,
 * leaving *out untouched.  Comparison is exact for any pair of values
 * (continued-fraction walk, no widening), so sorting a scale never depends
 * on floating point.  Floating point enters only where it must: cents.
 */
#ifndef LATTICED_RATIO_H
#define LATTICED_RATIO_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

struct ratio {
	int64_t num;
	int64_t den; /* always > 0; gcd(num, den) == 1 */
};

/* Longest text ratio_format() writes: "-9223372036854775807/9223372036854775807". */
#define RATIO_TEXT_MAX 41

/* num/den in lowest terms; false when den == 0 or a term is INT64_MIN. */
bool ratio_make(int64_t num, int64_t den, struct ratio *out);
bool ratio_mul(struct ratio a, struct ratio b, struct ratio *out);
bool ratio_div(struct ratio a, struct ratio b, struct ratio *out);
/* a^exponent for any integer exponent (negative means the reciprocal). */
bool ratio_pow(struct ratio a, int exponent, struct ratio *out);

/* -1, 0 or +1, exact. */
int ratio_cmp(struct ratio a, struct ratio b);
bool ratio_equal(struct ratio a, struct ratio b);

/*
 * Reduce a positive ratio into one period [1, period) by whole powers of
 * the period; *shift receives the power removed (may be NULL).
 * Requires value > 0 and period > 1.
 */
bool ratio_reduce_into(struct ratio value, struct ratio period,
		       struct ratio *out, int *shift);

/* 1200 * log2(value); value must be positive. */
double ratio_cents(struct ratio value);
double ratio_to_double(struct ratio value);

/*
 * Parse "N" or "N/D" (decimal digits, no sign, no spaces) into a positive
 * ratio.  Returns false on any other text, zero, or overflow.
 */
bool ratio_parse(const char *text, struct ratio *out);

/* Writes "num/den" (always with the denominator); returns buf. */
char *ratio_format(struct ratio value, char *buf, size_t size);

#endif
