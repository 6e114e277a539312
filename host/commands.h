/*
 * commands.h - `tidelock` commands that live in their own files. Each takes
 * the arguments after `tidelock` (argv[0] is the command's name), prints its
 * own one-line errors, and returns the exit status: 0 success, 1 failure
 * (bad file, I/O error, fidelity FAIL), 2 usage.
 */
#ifndef TL_HOST_COMMANDS_H
#define TL_HOST_COMMANDS_H

/* tidelock simulate [SCENARIO.ini] -o NAME [--spectra N] [--drive DB] [-q] */
int tl_cmd_simulate(int argc, char **argv);

/* tidelock replay NAME.sigmf-meta [SCENARIO.ini] [-o DIR] [--block-kib N] [-q] */
int tl_cmd_replay(int argc, char **argv);

#endif
