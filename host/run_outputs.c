/* run_outputs.c - the output folder of a run (see run_outputs.h). */
#include "run_outputs.h"

#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "atomic_file.h"
#include "npy.h"
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

typedef struct cal_file {
    const tl_scenario *s;
    const tl_product *p;
    const tl_cal_report *c;
} cal_file;

/* A temperature, or "nan" where it is undefined (no sign, whatever the libc). */
static void put_kelvin(FILE *f, double t)
{
    if (isnan(t))
        fputs("nan", f);
    else
        fprintf(f, "%.9g", t);
}

/* calibrated.csv: one row per channel, the model and each input's
 * calibrated antenna temperature with its propagated noise. */
static int write_calibrated_csv(FILE *f, void *ctx)
{
    const cal_file *cf = ctx;
    const tl_product *p = cf->p;
    const tl_cal_report *c = cf->c;
    const double df = tl_scenario_channel_hz(cf->s);
    fprintf(f, "frequency_mhz,t_model_k");
    for (uint32_t i = 0; i < p->inputs; i++)
        fprintf(f, ",t_ant%u_k,sigma%u_k", i, i);
    fputc('\n', f);
    for (uint32_t k = 0; k < p->channels; k++) {
        fprintf(f, "%.6f,", k * df / 1e6);
        put_kelvin(f, c->t_model[k]);
        for (uint32_t i = 0; i < p->inputs; i++) {
            fputc(',', f);
            put_kelvin(f, c->t_ant[i][k]);
            fputc(',', f);
            put_kelvin(f, c->sigma[i][k]);
        }
        fputc('\n', f);
    }
    return ferror(f) ? -1 : 0;
}

/* calibrated.npy: float64 (channels, 1 + 2 x inputs): the same columns
 * without the frequency (frequency_mhz.npy has it). */
static int write_calibrated_npy(const char *dir, const tl_product *p, const tl_cal_report *c, char *err, size_t cap)
{
    const size_t cols = 1u + 2u * p->inputs;
    double *m = malloc(sizeof *m * p->channels * cols);
    if (m == NULL) {
        snprintf(err, cap, "%s/calibrated.npy: out of memory", dir);
        return -1;
    }
    for (uint32_t k = 0; k < p->channels; k++) {
        m[k * cols] = c->t_model[k];
        for (uint32_t i = 0; i < p->inputs; i++) {
            m[k * cols + 1u + 2u * i] = c->t_ant[i][k];
            m[k * cols + 2u + 2u * i] = c->sigma[i][k];
        }
    }
    char path[4400];
    snprintf(path, sizeof path, "%s/calibrated.npy", dir);
    const int rc = tl_npy_write(path, "<f8", p->channels, cols, m, err, cap);
    free(m);
    return rc;
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
    if (tl_spectra_write(dir, &r->fid.product, s->sky.sample_rate_hz, (int)s->write_csv, (int)s->write_npy, err,
                         cap) != 0)
        return -1;
    if (r->cal.done && tl_run_outputs_calibrated(dir, s, &r->fid.product, &r->cal, err, cap) != 0)
        return -1;
    tl_dl_result dl;
    return tl_downlink_out_write(dir, s, r->experienced ? r->experienced : &r->fid.product, r->sk.blocks, r->sk.nblocks, &dl, err, cap);
}

int tl_run_outputs_calibrated(const char *dir, const tl_scenario *s, const tl_product *p, const tl_cal_report *c,
                              char *err, size_t cap)
{
    char path[4400];
    if (s->write_csv) {
        cal_file cf = { s, p, c };
        snprintf(path, sizeof path, "%s/calibrated.csv", dir);
        if (tl_atomic_write(path, write_calibrated_csv, &cf, err, cap) != 0)
            return -1;
    }
    if (s->write_npy && write_calibrated_npy(dir, p, c, err, cap) != 0)
        return -1;
    return 0;
}

void tl_run_outputs_say(FILE *out, const char *dir, const tl_scenario *s)
{
    const int cal = s->cfg.switch_steps > 0u && (s->write_csv || s->write_npy);
    fprintf(out, "wrote %s/: summary.json, scenario.ini%s%s%s, downlink (packets.bin, frames.bin)\n", dir,
            s->write_csv ? ", spectra as CSV" : "", s->write_npy ? ", spectra as .npy" : "",
            cal ? ", calibrated spectra (calibrated.*)" : "");
}
