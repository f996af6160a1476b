/*
 * valgrind_selfcheck: plants one definite leak, so the valgrind stage
 * proves its own options turn a leak into a failure (registered with
 * WILL_FAIL in tests/CMakeLists.txt).  Not a test of latticed.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int main(void)
{
	char *volatile lost = malloc(48);
	if (!lost)
		return 2;
	strcpy(lost, "never freed");
	printf("%s\n", lost);
	lost = NULL;
	return 0;
}
