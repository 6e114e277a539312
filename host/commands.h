/*
 * commands.h - `tidelock` commands that live in their own files. Each takes
 * the arguments after `tidelock` (argv[0] is the command's name), prints its
 * own one-line errors, and returns the exit status: 0 success, 1 failure
 * (bad file, I/O error, fidelity FAIL), 2 usage.
 */
#ifndef TL_HOST_COMMANDS_H
#define TL_HOST_COMMANDS_H

/* Exit status of every command. */
enum { EXIT_OK = 0, EXIT_FAIL = 1, EXIT_USAGE = 2 };

/* One-line usage error on stderr: "tidelock CMD: <fmt with arg> (see
 * tidelock CMD --help)". Returns EXIT_USAGE. */
int tl_cli_usage(const char *cmd, const char *fmt, const char *arg);

/* getopt_long's complaint about argv[optind - 1] (c is ':' for a missing
 * value, anything else for an unknown option), as one line. EXIT_USAGE. */
int tl_cli_bad_option(const char *cmd, char **argv, int c);

/* tidelock simulate [SCENARIO.ini] -o NAME [--spectra N] [--drive DB] [-q] */
int tl_cmd_simulate(int argc, char **argv);

/* tidelock replay NAME.sigmf-meta [SCENARIO.ini] [-o DIR] [--block-kib N] [-q] */
int tl_cmd_replay(int argc, char **argv);

/* tidelock decode INPUT [SCENARIO.ini] -o DIR [--raw] [--frame-length L] [-q] */
int tl_cmd_decode(int argc, char **argv);

/* tidelock budget [SCENARIO.ini] [-o DIR] [-q] */
int tl_cmd_budget(int argc, char **argv);

/* tidelock vectors make|check [DIR] [-q] */
int tl_cmd_vectors(int argc, char **argv);

/* tidelock hil --target T [--timeout S] [--retries N] [--junit FILE] [--allow-hardware] VECTOR... */
int tl_cmd_hil(int argc, char **argv);

/* tidelock upset [--trials N] [--target LIST] [--seed S] [--flips K] [--scrub-period P] ... */
int tl_cmd_upset(int argc, char **argv);

/* tidelock sweep [SCENARIO.ini] --vary SECTION.KEY=V,... [--vary ...] --out DIR [--shard I/N] [--common-noise] [-q] */
int tl_cmd_sweep(int argc, char **argv);

/* tidelock merge SHARD.tlshard... --out DIR [-q] */
int tl_cmd_merge(int argc, char **argv);

#endif
