/* cli_common.c - the one-line usage errors every command shares (commands.h). */
#include "commands.h"

#include <getopt.h>
#include <stdio.h>

int tl_cli_usage(const char *cmd, const char *fmt, const char *arg)
{
    fprintf(stderr, "tidelock %s: ", cmd);
    fprintf(stderr, fmt, arg);
    fprintf(stderr, " (see tidelock %s --help)\n", cmd);
    return EXIT_USAGE;
}

int tl_cli_bad_option(const char *cmd, char **argv, int c)
{
    if (c == ':')
        return tl_cli_usage(cmd, "%s needs a value", argv[optind - 1]);
    return tl_cli_usage(cmd, "unknown option '%s'", argv[optind - 1]);
}
