/* run_outputs.c - the output folder of a run (see run_outputs.h). */
#include "run_outputs.h"

#include <errno.h>
#include <string.h>
#include <sys/stat.h>

#include "atomic_file.h"
#include "report.h"
#include "spectra_out.h"

int tl_run_outputs_folder(const char *dir, char *err, size_t cap)
{
    if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
        snprintf(err, cap, "%s: cannot create output folder: %s", dir, strerror(errno));
        return -1;
    }
    struct stat st;
    if (stat(dir, &st) != 0 || !S_ISDIR(st.st_mode)) {
        snprintf(err, cap, "%s: not a folder", dir);
        return -1;
    }
    return 0;
}

static int write_scenario_file(FILE *f, void *ctx)
{
    return tl_scenario_write(f, (const tl_scenario *)ctx);
}

int tl_run_outputs_write(const char *dir, const tl_scenario *s, const tl_run_result *r, char *err, size_t cap)
{
    char path[4400];
    snprintf(path, sizeof path, "%s/summary.json", dir);
    if (tl_report_write_json(path, s, r, err, cap) != 0)
        return -1;
    snprintf(path, sizeof path, "%s/scenario.ini", dir);
    if (tl_atomic_write(path, write_scenario_file, (void *)s, err, cap) != 0)
        return -1;
    return tl_spectra_write(dir, &r->fid.product, s->sky.sample_rate_hz, (int)s->write_csv, (int)s->write_npy, err,
                            cap);
}

void tl_run_outputs_say(FILE *out, const char *dir, const tl_scenario *s)
{
    fprintf(out, "wrote %s/: summary.json, scenario.ini%s%s\n", dir, s->write_csv ? ", spectra as CSV" : "",
            s->write_npy ? ", spectra as .npy" : "");
}
