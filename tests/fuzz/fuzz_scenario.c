/*
 * fuzz_scenario.c - libFuzzer target: the scenario reader
 * (host/scenario.h, tl_scenario_load) on arbitrary text.
 *
 * The input is written to a file in a private temporary folder and loaded
 * over the defaults. Checked on every input (abort() is the failure):
 *   - an error is one line, non-empty, naming the file;
 *   - a scenario that loads passes tl_scenario_check, and writes
 *     (tl_scenario_write) a file that loads again and writes the same text
 *     (scenario.h: the written file is a scenario file).
 */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "fuzz_common.h"
#include "scenario.h"

static char *write_text(const tl_scenario *s, size_t *len)
{
    char *buf = NULL;
    FILE *f = open_memstream(&buf, len);
    if (f == NULL || tl_scenario_write(f, s) != 0 || fclose(f) != 0)
        abort();
    return buf;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char path[300], err[512];
    snprintf(path, sizeof path, "%s/s.ini", fuzz_dir_get());
    fuzz_write(path, data, size);
    tl_scenario s;
    tl_scenario_default(&s);
    err[0] = '\0';
    if (tl_scenario_load(path, &s, err, sizeof err) != 0) {
        if (err[0] == '\0' || strchr(err, '\n') != NULL || strncmp(err, path, strlen(path)) != 0)
            abort(); /* not one line naming the file */
        return 0;
    }
    if (tl_scenario_check(&s, path, err, sizeof err) != 0)
        abort();
    size_t n1 = 0, n2 = 0;
    char *t1 = write_text(&s, &n1);
    fuzz_write(path, t1, n1);
    tl_scenario s2;
    tl_scenario_default(&s2);
    if (tl_scenario_load(path, &s2, err, sizeof err) != 0) {
        fprintf(stderr, "fuzz_scenario: the written scenario does not load: %s\n", err);
        abort();
    }
    char *t2 = write_text(&s2, &n2);
    if (n1 != n2 || memcmp(t1, t2, n1) != 0) {
        fprintf(stderr, "fuzz_scenario: write(load(write(s))) differs from write(s)\n");
        abort();
    }
    free(t1);
    free(t2);
    return 0;
}
