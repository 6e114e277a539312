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
    char err[4400];
    if (tl_gen_write_file(argv[2], strcmp(argv[1], "twiddle") == 0 ? tl_gen_twiddle_source : tl_gen_default_taps_source,
                          err, sizeof err) != 0) {
        fprintf(stderr, "tl-tablegen: %s\n", err);
        return 1;
    }
    return 0;
}
