/*
 * Tests of exact rational arithmetic: reduction, overflow detection (never
 * wrap), exact comparison, period reduction and cents.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <math.h>

#include "latticed/ratio.h"

static struct ratio R(int64_t n, int64_t d)
{
	struct ratio r;
	assert_true(ratio_make(n, d, &r));
	return r;
}

static void make_reduces_and_normalises_sign(void **state)
{
	(void)state;
	struct ratio r = R(6, -4);
	assert_int_equal(r.num, -3);
	assert_int_equal(r.den, 2);
	r = R(0, 5);
	assert_int_equal(r.num, 0);
	assert_int_equal(r.den, 1);
	assert_false(ratio_make(1, 0, &r));
	assert_false(ratio_make(INT64_MIN, 1, &r));
}

static void mul_div_exact(void **state)
{
	(void)state;
	struct ratio r;
	/* 3/2 * 5/4 = 15/8; 15/8 / 3/2 = 5/4 (common practice: JI interval arithmetic) */
	assert_true(ratio_mul(R(3, 2), R(5, 4), &r));
	assert_int_equal(r.num, 15);
	assert_int_equal(r.den, 8);
	assert_true(ratio_div(r, R(3, 2), &r));
	assert_int_equal(r.num, 5);
	assert_int_equal(r.den, 4);
	/* cross-cancellation keeps big but cancelling terms in range */
	assert_true(ratio_mul(R(INT64_MAX, 3), R(3, INT64_MAX), &r));
	assert_int_equal(r.num, 1);
	assert_int_equal(r.den, 1);
}

static void overflow_is_reported_not_wrapped(void **state)
{
	(void)state;
	struct ratio r = {7, 7};
	assert_false(ratio_mul(R(INT64_MAX / 2 + 1, 1), R(2, 1), &r));
	assert_int_equal(r.num, 7); /* untouched on failure */
	assert_false(ratio_mul(R(1, 3037000500LL), R(1, 3037000500LL), &r));
	assert_false(ratio_div(R(INT64_MAX, 1), R(1, 2), &r));
	/* 2^62 fits, 2^63 does not */
	assert_true(ratio_pow(R(2, 1), 62, &r));
	assert_int_equal(r.num, (int64_t)1 << 62);
	assert_false(ratio_pow(R(2, 1), 63, &r));
	assert_true(ratio_pow(R(3, 2), -3, &r));
	assert_int_equal(r.num, 8);
	assert_int_equal(r.den, 27);
}

static void comparison_is_exact(void **state)
{
	(void)state;
	/* values too close for double: (2^62-1)/(2^62) vs (2^62-2)/(2^62-1) */
	int64_t big = (int64_t)1 << 62;
	struct ratio a = R(big - 1, big), b = R(big - 2, big - 1);
	assert_true((double)a.num / (double)a.den == (double)b.num / (double)b.den);
	assert_int_equal(ratio_cmp(a, b), 1);
	assert_int_equal(ratio_cmp(b, a), -1);
	assert_int_equal(ratio_cmp(a, a), 0);
	assert_int_equal(ratio_cmp(R(-1, 2), R(1, 3)), -1);
	assert_int_equal(ratio_cmp(R(-1, 2), R(-1, 3)), -1);
	assert_int_equal(ratio_cmp(R(3, 1), R(3, 1)), 0);
	assert_int_equal(ratio_cmp(R(3, 1), R(7, 2)), -1);
	assert_int_equal(ratio_cmp(R(7, 2), R(3, 1)), 1);
	assert_true(ratio_equal(R(10, 4), R(5, 2)));
}

static void reduce_into_period(void **state)
{
	(void)state;
	struct ratio r;
	int shift;
	/* 35 reduced into the octave is 35/32, five octaves down (common practice) */
	assert_true(ratio_reduce_into(R(35, 1), R(2, 1), &r, &shift));
	assert_int_equal(r.num, 35);
	assert_int_equal(r.den, 32);
	assert_int_equal(shift, 5);
	/* 5 into the tritave 3/1 is 5/3, one tritave down (common practice) */
	assert_true(ratio_reduce_into(R(5, 1), R(3, 1), &r, &shift));
	assert_int_equal(r.num, 5);
	assert_int_equal(r.den, 3);
	assert_int_equal(shift, 1);
	/* below 1 moves up: 1/5 -> 8/5 */
	assert_true(ratio_reduce_into(R(1, 5), R(2, 1), &r, &shift));
	assert_int_equal(r.num, 8);
	assert_int_equal(r.den, 5);
	assert_int_equal(shift, -3);
	/* the period itself reduces to 1/1 */
	assert_true(ratio_reduce_into(R(2, 1), R(2, 1), &r, NULL));
	assert_int_equal(r.num, 1);
	assert_int_equal(r.den, 1);
	/* a non-octave period such as 3/2 */
	assert_true(ratio_reduce_into(R(5, 1), R(3, 2), &r, &shift));
	assert_int_equal(r.num, 40);
	assert_int_equal(r.den, 27);
	assert_int_equal(shift, 3);
	assert_false(ratio_reduce_into(R(5, 1), R(1, 1), &r, NULL));
	assert_false(ratio_reduce_into(R(-5, 1), R(2, 1), &r, NULL));
}

static void cents_match_1200_log2(void **state)
{
	(void)state;
	/* Values: Wikipedia "Cent (music)" / Xenharmonic Wiki "Cent" [TH]:
	 * 3/2 = 701.955, 5/4 = 386.314, 7/4 = 968.826, 11/8 = 551.318,
	 * 9/8 = 203.910, 6/5 = 315.641, 81/80 = 21.506 cents. */
	const struct { int64_t n, d; double cents; } table[] = {
		{3, 2, 701.955}, {5, 4, 386.314}, {7, 4, 968.826}, {11, 8, 551.318},
		{9, 8, 203.910}, {6, 5, 315.641}, {81, 80, 21.506}, {2, 1, 1200.0},
	};
	for (size_t i = 0; i < sizeof table / sizeof table[0]; i++) {
		double c = ratio_cents(R(table[i].n, table[i].d));
		assert_true(fabs(c - table[i].cents) < 0.0005);
		/* and the definition itself: cents = 1200 log2(r) */
		assert_true(fabs(c - 1200.0 * log2((double)table[i].n / (double)table[i].d)) < 1e-9);
	}
}

static void parse_and_format(void **state)
{
	(void)state;
	struct ratio r;
	char buf[RATIO_TEXT_MAX];
	assert_true(ratio_parse("9/8", &r));
	assert_string_equal(ratio_format(r, buf, sizeof buf), "9/8");
	assert_true(ratio_parse("6/4", &r));
	assert_string_equal(ratio_format(r, buf, sizeof buf), "3/2");
	assert_true(ratio_parse("7", &r));
	assert_string_equal(ratio_format(r, buf, sizeof buf), "7/1");
	const char *bad[] = {"", "0", "1/0", "-3", "3/", "/2", "1.5", "3 ", "x", "99999999999999999999", "1/2/3"};
	for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++)
		assert_false(ratio_parse(bad[i], &r));
	assert_true(ratio_parse("9223372036854775807", &r));
	assert_string_equal(ratio_format(R(-INT64_MAX, INT64_MAX - 1), buf, sizeof buf),
			    "-9223372036854775807/9223372036854775806");
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(make_reduces_and_normalises_sign),
		cmocka_unit_test(mul_div_exact),
		cmocka_unit_test(overflow_is_reported_not_wrapped),
		cmocka_unit_test(comparison_is_exact),
		cmocka_unit_test(reduce_into_period),
		cmocka_unit_test(cents_match_1200_log2),
		cmocka_unit_test(parse_and_format),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
