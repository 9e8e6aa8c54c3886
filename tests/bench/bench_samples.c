/* Benchmark (not a test): what the sampling commands cost on the demo
 * season.  Writes build/bench/velloran-u.ini, the demo site with standard
 * uncertainties added (the README's "What it costs" names them), and times
 * `point --samples 10000`, `thresholds --confidence 0.95 --samples 1000`
 * simplified to 5 mm, and `run --samples 1000` with every processor, with
 * one (-j 1), and with --steps; and `screen --samples 1000` of the demo
 * forecast (build/bench/velloran-fu.ini: mass_sd 80 on the 1720 kg and
 * 1650 kg leaves, the outfall ensemble's offset_sd 0.03 m) with every
 * processor and with one.  Figures only; never fails on time.  Run
 * from the repository root (make bench does). */
#define _DEFAULT_SOURCE
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <time.h>

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Run `cmd` (a shell line) and print its wall time; -1 when it failed
 * (exit 1, "some gate below its margin", is a result, not a failure). */
static double timed(const char *what, const char *cmd)
{
    double t0 = now_s();
    int rc = system(cmd);
    double dt = now_s() - t0;
    if (rc == -1 || !WIFEXITED(rc) || WEXITSTATUS(rc) > 1) {
        printf("  %-46s FAILED (%s)\n", what, cmd);
        return -1.0;
    }
    printf("  %-46s %8.2f s\n", what, dt);
    return dt;
}

int main(void)
{
    const char *make_site =
        "mkdir -p build/bench/samples && cp data/demo/*.csv build/bench/ && "
        "sed -e '/^mass = 1720/a mass_sd = 80' "
        "-e '/^mass = 1650/a mass_sd = 80' -e '/^mass = 380/a mass_sd = 20' "
        "-e '/^extra_moment = 9500/a extra_moment_sd = 400' "
        "-e '/^extra_moment = 8800/a extra_moment_sd = 400' "
        "-e '/^extra_moment = 1500/a extra_moment_sd = 100' "
        "-e '/^cg_along = 0.92/a cg_along_sd = 0.03' "
        "-e '/^offset = 9.144/a offset_sd = 0.01' "
        "data/demo/velloran.ini > build/bench/velloran-u.ini";
    const char *make_forecast =
        "sed -e '/^mass = 1720/a mass_sd = 80' "
        "-e '/^mass = 1650/a mass_sd = 80' "
        "-e '/^value_column = tw_\\*/a offset = 0\\noffset_sd = 0.03' "
        "data/demo/velloran-forecast.ini > build/bench/velloran-fu.ini";
    if (system(make_site) != 0 || system(make_forecast) != 0) {
        fprintf(stderr, "bench_samples: cannot write the site\n");
        return 1;
    }
    printf("sampling commands on the demo season with X_sd "
           "(build/bench/velloran-u.ini):\n");
    timed("run (no samples)",
          "build/sillwatch run build/bench/velloran-u.ini "
          "-o build/bench/samples/plain -q");
    timed("point --samples 10000 (three gates)",
          "build/sillwatch point build/bench/velloran-u.ini --headwater "
          "12.2 --tailwater 11.6 --samples 10000 > /dev/null");
    timed("thresholds --confidence 0.95 --samples 1000",
          "build/sillwatch thresholds build/bench/velloran-u.ini "
          "--headwater 11.3:12.6:0.01 --simplify 0.005 --confidence 0.95 "
          "--samples 1000 -o build/bench/samples/table.csv "
          "> /dev/null 2>&1");
    timed("run --samples 1000",
          "build/sillwatch run build/bench/velloran-u.ini "
          "-o build/bench/samples/a --samples 1000 -q");
    timed("run --samples 1000 -j 1",
          "build/sillwatch run build/bench/velloran-u.ini "
          "-o build/bench/samples/b --samples 1000 -q -j 1");
    timed("run --samples 1000 --steps",
          "build/sillwatch run build/bench/velloran-u.ini "
          "-o build/bench/samples/c --samples 1000 --steps -q");
    printf("the demo forecast (24 members) with X_sd "
           "(build/bench/velloran-fu.ini):\n");
    timed("screen (no samples)",
          "build/sillwatch screen build/bench/velloran-fu.ini "
          "-o build/bench/samples/sp -q");
    timed("screen --samples 1000",
          "build/sillwatch screen build/bench/velloran-fu.ini "
          "-o build/bench/samples/sa --samples 1000 -q");
    timed("screen --samples 1000 -j 1",
          "build/sillwatch screen build/bench/velloran-fu.ini "
          "-o build/bench/samples/sb --samples 1000 -q -j 1");
    return 0;
}
