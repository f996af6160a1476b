/*
 * ratio: exact rationals with overflow detection.
 *
 * Products of seeds grow fast (a 6-of-12 set of primes reaches 10^13), so
 * each multiplication first cancels the cross factors, which keeps results
 * in lowest terms without a separate reduction, and then multiplies with
 * the compiler's overflow-checked builtins.  Comparison uses the
 * continued-fraction expansion of both values so it needs no wider type
 * (armhf has no __int128).
 */
#include "latticed/ratio.h"

#include <math.h>
#include <stdio.h>

static int64_t gcd_u64(uint64_t a, uint64_t b)
{
	while (b != 0) {
		uint64_t t = a % b;
		a = b;
		b = t;
	}
	return (int64_t)a;
}

static uint64_t magnitude(int64_t v)
{
	return v < 0 ? (uint64_t)0 - (uint64_t)v : (uint64_t)v;
}

bool ratio_make(int64_t num, int64_t den, struct ratio *out)
{
	if (den == 0 || num == INT64_MIN || den == INT64_MIN)
		return false;
	if (den < 0) {
		num = -num;
		den = -den;
	}
	int64_t g = gcd_u64(magnitude(num), (uint64_t)den);
	if (g == 0)
		g = 1;
	out->num = num / g;
	out->den = den / g;
	return true;
}

bool ratio_mul(struct ratio a, struct ratio b, struct ratio *out)
{
	int64_t g1 = gcd_u64(magnitude(a.num), (uint64_t)b.den);
	int64_t g2 = gcd_u64(magnitude(b.num), (uint64_t)a.den);
	if (g1 == 0)
		g1 = 1;
	if (g2 == 0)
		g2 = 1;
	int64_t num, den;
	if (__builtin_mul_overflow(a.num / g1, b.num / g2, &num))
		return false;
	if (__builtin_mul_overflow(a.den / g2, b.den / g1, &den))
		return false;
	if (num == INT64_MIN)
		return false;
	out->num = num;
	out->den = den;
	return true;
}

bool ratio_div(struct ratio a, struct ratio b, struct ratio *out)
{
	struct ratio inverse;
	if (!ratio_make(b.den, b.num, &inverse))
		return false;
	return ratio_mul(a, inverse, out);
}

bool ratio_pow(struct ratio a, int exponent, struct ratio *out)
{
	struct ratio base = a;
	if (exponent < 0) {
		if (!ratio_make(a.den, a.num, &base))
			return false;
		exponent = -exponent;
	}
	struct ratio acc = {1, 1};
	while (exponent > 0) {
		if (exponent & 1) {
			if (!ratio_mul(acc, base, &acc))
				return false;
		}
		exponent >>= 1;
		if (exponent > 0 && !ratio_mul(base, base, &base))
			return false;
	}
	*out = acc;
	return true;
}

/* Compares p1/q1 with p2/q2 for p >= 0, q > 0 via continued fractions. */
static int cmp_nonnegative(uint64_t p1, uint64_t q1, uint64_t p2, uint64_t q2)
{
	int sign = 1;
	for (;;) {
		uint64_t i1 = p1 / q1, i2 = p2 / q2;
		if (i1 != i2)
			return i1 < i2 ? -sign : sign;
		uint64_t r1 = p1 % q1, r2 = p2 % q2;
		if (r1 == 0 || r2 == 0) {
			if (r1 == r2)
				return 0;
			/* the one with a remainder is larger */
			return r1 == 0 ? -sign : sign;
		}
		/* compare q1/r1 with q2/r2, order reversed */
		p1 = q1;
		q1 = r1;
		p2 = q2;
		q2 = r2;
		sign = -sign;
	}
}

int ratio_cmp(struct ratio a, struct ratio b)
{
	bool a_neg = a.num < 0, b_neg = b.num < 0;
	if (a_neg != b_neg)
		return a_neg ? -1 : 1;
	int c = cmp_nonnegative(magnitude(a.num), (uint64_t)a.den,
				magnitude(b.num), (uint64_t)b.den);
	return a_neg ? -c : c;
}

bool ratio_equal(struct ratio a, struct ratio b)
{
	return a.num == b.num && a.den == b.den;
}

bool ratio_reduce_into(struct ratio value, struct ratio period,
		       struct ratio *out, int *shift)
{
	const struct ratio one = {1, 1};
	if (value.num <= 0 || ratio_cmp(period, one) <= 0)
		return false;
	int removed = 0;
	struct ratio v = value;
	while (ratio_cmp(v, period) >= 0) {
		if (!ratio_div(v, period, &v))
			return false;
		removed++;
	}
	while (ratio_cmp(v, one) < 0) {
		if (!ratio_mul(v, period, &v))
			return false;
		removed--;
	}
	*out = v;
	if (shift)
		*shift = removed;
	return true;
}

double ratio_to_double(struct ratio value)
{
	return (double)value.num / (double)value.den;
}

double ratio_cents(struct ratio value)
{
	/* separate logs keep full precision when both terms are large */
	return 1200.0 * (log2((double)value.num) - log2((double)value.den));
}

static bool parse_u63(const char **cursor, int64_t *out)
{
	const char *p = *cursor;
	int64_t v = 0;
	if (*p < '0' || *p > '9')
		return false;
	while (*p >= '0' && *p <= '9') {
		if (__builtin_mul_overflow(v, 10, &v) ||
		    __builtin_add_overflow(v, *p - '0', &v))
			return false;
		p++;
	}
	*cursor = p;
	*out = v;
	return true;
}

bool ratio_parse(const char *text, struct ratio *out)
{
	const char *p = text;
	int64_t num, den = 1;
	if (!parse_u63(&p, &num))
		return false;
	if (*p == '/') {
		p++;
		if (!parse_u63(&p, &den))
			return false;
	}
	if (*p != '\0' || num == 0 || den == 0)
		return false;
	return ratio_make(num, den, out);
}

char *ratio_format(struct ratio value, char *buf, size_t size)
{
	snprintf(buf, size, "%lld/%lld", (long long)value.num,
		 (long long)value.den);
	return buf;
}
