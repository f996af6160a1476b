/*
 * config_values: the value forms a config key can take.
 *
 * Numbers go through strtol/strtod with the whole text consumed, so "440Hz"
 * is refused rather than read as 440; ratios go through the core's exact
 * ratio_parse.  A channel range skips 10 only when the caller asks (the
 * output pools, where channel 10 is usually a drum kit).
 */
#include "config_values.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "latticed/ratio.h"

#define CHANNEL_WORDS_MAX 63

void text_copy(char *dst, size_t size, const char *src)
{
	size_t len = strlen(src);
	if (len >= size)
		len = size - 1;
	memcpy(dst, src, len);
	dst[len] = '\0';
}

void text_trim(char *s)
{
	size_t len = strlen(s);
	while (len > 0 && (s[len - 1] == ' ' || s[len - 1] == '\t' ||
			   s[len - 1] == '\r' || s[len - 1] == '\n'))
		s[--len] = '\0';
	size_t start = 0;
	while (s[start] == ' ' || s[start] == '\t')
		start++;
	if (start)
		memmove(s, s + start, len - start + 1);
}

int text_words(char *text, char **words, int max)
{
	int n = 0;
	char *save = NULL;
	for (char *w = strtok_r(text, " \t,", &save); w; w = strtok_r(NULL, " \t,", &save)) {
		if (n == max)
			return max + 1;
		words[n++] = w;
	}
	return n;
}

bool value_whole(const char *text, long lo, long hi, long *out)
{
	char *end;
	errno = 0;
	long v = strtol(text, &end, 10);
	if (errno || end == text || *end != '\0' || v < lo || v > hi)
		return false;
	*out = v;
	return true;
}

bool value_decimal(const char *text, double lo, double hi, double *out)
{
	char *end;
	errno = 0;
	double v = strtod(text, &end);
	if (errno || end == text || *end != '\0' || !isfinite(v) || v < lo || v > hi)
		return false;
	*out = v;
	return true;
}

bool value_factor(const char *text, double lo, double hi, double *out)
{
	struct ratio r;
	if (ratio_parse(text, &r)) {
		double v = ratio_to_double(r);
		if (v < lo || v > hi)
			return false;
		*out = v;
		return true;
	}
	return value_decimal(text, lo, hi, out);
}

bool value_yes_no(const char *text, bool *out)
{
	static const char *const yes[] = {"yes", "true", "on", "1"};
	static const char *const no[] = {"no", "false", "off", "0"};
	for (size_t i = 0; i < sizeof yes / sizeof yes[0]; i++) {
		if (strcmp(text, yes[i]) == 0) {
			*out = true;
			return true;
		}
		if (strcmp(text, no[i]) == 0) {
			*out = false;
			return true;
		}
	}
	return false;
}

/* "5" or "2-9" into mask; false on anything else. */
static bool add_channel_word(char *word, bool skip_ten, uint16_t *mask)
{
	char *dash = strchr(word, '-');
	long lo, hi;
	if (!dash) {
		if (!value_whole(word, 1, 16, &lo))
			return false;
		*mask |= (uint16_t)(1u << (lo - 1));
		return true;
	}
	*dash = '\0';
	if (!value_whole(word, 1, 16, &lo) || !value_whole(dash + 1, 1, 16, &hi) || hi < lo)
		return false;
	for (long ch = lo; ch <= hi; ch++)
		if (!skip_ten || ch != 10)
			*mask |= (uint16_t)(1u << (ch - 1));
	return true;
}

bool value_channels(const char *text, bool skip_ten, uint16_t *out)
{
	char buf[4096];
	char *words[CHANNEL_WORDS_MAX + 1];
	text_copy(buf, sizeof buf, text);
	int n = text_words(buf, words, CHANNEL_WORDS_MAX);
	if (n < 1 || n > CHANNEL_WORDS_MAX)
		return false;
	uint16_t mask = 0;
	for (int i = 0; i < n; i++)
		if (!add_channel_word(words[i], skip_ten, &mask))
			return false;
	if (mask == 0)
		return false;
	*out = mask;
	return true;
}

char *config_format_channels(uint16_t channels, char *buf, size_t size)
{
	size_t used = 0;
	buf[0] = '\0';
	for (int ch = 1; ch <= 16; ch++) {
		if (!(channels & (1u << (ch - 1))))
			continue;
		int last = ch;
		while (last < 16 && (channels & (1u << last)))
			last++;
		int n = last == ch ? snprintf(buf + used, size - used, "%s%d",
					       used ? "," : "", ch)
				   : snprintf(buf + used, size - used, "%s%d-%d",
					       used ? "," : "", ch, last);
		if (n < 0 || (size_t)n >= size - used)
			break;
		used += (size_t)n;
		ch = last;
	}
	return buf;
}

bool value_connect(const char *text, struct connect_list *out, char *why, size_t why_size)
{
	struct connect_list list;
	memset(&list, 0, sizeof list);
	if (strcmp(text, "none") == 0) {
		*out = list;
		return true;
	}
	const char *p = text;
	for (;;) {
		const char *comma = strchr(p, ',');
		size_t len = comma ? (size_t)(comma - p) : strlen(p);
		while (len > 0 && (*p == ' ' || *p == '\t')) {
			p++;
			len--;
		}
		while (len > 0 && (p[len - 1] == ' ' || p[len - 1] == '\t'))
			len--;
		if (len == 0) {
			snprintf(why, why_size, "connect has an empty pattern, expected %s",
				 "none, or patterns separated by commas");
			return false;
		}
		if (len >= CONFIG_PATTERN_MAX) {
			snprintf(why, why_size, "connect pattern '%.*s' is %zu characters long, expected at most %d",
				 (int)len, p, len, CONFIG_PATTERN_MAX - 1);
			return false;
		}
		if (list.count >= CONFIG_MAX_PATTERNS) {
			snprintf(why, why_size, "connect has more than %d patterns, expected at most %d",
				 CONFIG_MAX_PATTERNS, CONFIG_MAX_PATTERNS);
			return false;
		}
		memcpy(list.patterns[list.count], p, len);
		list.patterns[list.count][len] = '\0';
		list.count++;
		if (!comma)
			break;
		p = comma + 1;
	}
	*out = list;
	return true;
}
