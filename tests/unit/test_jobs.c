/* Unit tests of the worker processes (src/jobs.c): every job runs once in
 * a process of its own, its exit status is recorded (128 + the signal for
 * a job a signal ended, as POSIX shells report it), a failed job does
 * not stop the others, and one worker runs the jobs in order. */
#include "testutil.h"

#include <signal.h>
#include <string.h>
#include <unistd.h>

#include "sillwatch/jobs.h"

typedef struct seen {
    size_t order[16];
    size_t n;
    int last_done;
} seen;

/* Job i exits with i; job 3 ends by SIGKILL; each leaves a mark file so
 * that the test sees it ran exactly once. */
static int job(size_t i, void *ctx)
{
    char path[128];
    (void)ctx;
    snprintf(path, sizeof path, "%s/ran-%zu", sw_test_dir(), i);
    FILE *fp = fopen(path, "a");
    if (fp != NULL) {
        fputc('x', fp);
        fclose(fp);
    }
    if (i == 3)
        raise(SIGKILL);
    return (int)i;
}

static void done(size_t i, int status, size_t n_done, void *ctx)
{
    seen *s = ctx;
    (void)status;
    s->order[s->n++] = i;
    s->last_done = (int)n_done;
}

static void test_every_job_once_with_its_status(void **state)
{
    (void)state;
    int status[7];
    seen s = {{0}, 0, 0};
    sw_error err;
    assert_int_equal(sw_jobs_run(7, 2, job, done, &s, status, &err), SW_OK);
    for (size_t i = 0; i < 7; i++) {
        char path[128], buf[8] = "";
        snprintf(path, sizeof path, "%s/ran-%zu", sw_test_dir(), i);
        FILE *fp = fopen(path, "r");
        assert_non_null(fp);
        assert_non_null(fgets(buf, sizeof buf, fp));
        fclose(fp);
        assert_string_equal(buf, "x"); /* once */
        assert_int_equal(status[i], i == 3 ? 128 + SIGKILL : (int)i);
    }
    assert_int_equal(s.n, 7);
    assert_int_equal(s.last_done, 7);
}

/* With one worker the jobs end in the order they start. */
static void test_one_worker_in_order(void **state)
{
    (void)state;
    int status[5];
    seen s = {{0}, 0, 0};
    sw_error err;
    assert_int_equal(sw_jobs_run(5, 1, job, done, &s, status, &err), SW_OK);
    for (size_t i = 0; i < 5; i++)
        assert_int_equal(s.order[i], i);
}

static void test_default_workers(void **state)
{
    (void)state;
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    assert_int_equal(sw_jobs_default_workers(), n < 1 ? 1 : (unsigned)n);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_every_job_once_with_its_status),
        cmocka_unit_test(test_one_worker_in_order),
        cmocka_unit_test(test_default_workers),
    };
    return cmocka_run_group_tests(tests, sw_test_mkdir, sw_test_rmdir);
}
