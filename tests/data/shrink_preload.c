/* shrink_preload: a test-only LD_PRELOAD library for tests/e2e_shrink.sh.
 * It stands in for posix_madvise, which el_source calls right after it has
 * mapped a log file and before it reads a byte of it: when the variable
 * EL_TEST_SHRINK names a file, that file is cut to EL_TEST_SHRINK_TO bytes
 * (default 0) at that moment, so the reader meets a file that shrank while
 * it was being read, every time (a background truncation would race with
 * the read). The advice itself is only a hint: it is dropped. */
#define _DEFAULT_SOURCE 1
#include <stddef.h>
#include <stdlib.h>
#include <sys/mman.h>
#include <unistd.h>

int posix_madvise(void *addr, size_t len, int advice)
{
    (void)addr;
    (void)len;
    (void)advice;
    const char *path = getenv("EL_TEST_SHRINK");
    const char *to = getenv("EL_TEST_SHRINK_TO");
    if (path != NULL && path[0] != '\0')
        (void)truncate(path, to != NULL ? (off_t)atol(to) : 0);
    return 0;
}
