/* tablegen_main.c - bootstrap writer of the committed firmware tables.
 * Built before the firmware it feeds (it links no generated table), so a
 * clean tree can regenerate them: tl-tablegen twiddle|taps OUTPUT.c */
#include <stdio.h>
#include <string.h>
#include "tables_gen.h"

int main(int argc, char **argv)
{
    if (argc != 3 || (strcmp(argv[1], "twiddle") != 0 && strcmp(argv[1], "taps") != 0)) {
        fprintf(stderr, "usage: tl-tablegen twiddle|taps OUTPUT.c\n");
        return 2;
    }
    char tmp[4096];
    if (snprintf(tmp, sizeof tmp, "%s.tmp", argv[2]) >= (int)sizeof tmp) {
        fprintf(stderr, "tl-tablegen: %s: path too long\n", argv[2]);
        return 1;
    }
    FILE *f = fopen(tmp, "w");
    if (f == NULL) {
        perror(tmp);
        return 1;
    }
    int rc = strcmp(argv[1], "twiddle") == 0 ? tl_gen_twiddle_source(f) : tl_gen_default_taps_source(f);
    if (fclose(f) != 0)
        rc = -1;
    if (rc != 0 || rename(tmp, argv[2]) != 0) {
        fprintf(stderr, "tl-tablegen: %s: write failed\n", argv[2]);
        remove(tmp);
        return 1;
    }
    return 0;
}
