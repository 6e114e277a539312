/* cmd_simulate.c - `tidelock simulate`: a scenario's ADC voltages as a SigMF
 * recording (sigmf.h), for `tidelock replay` or any SigMF tool. */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "commands.h"
#include "scenario.h"
#include "sigmf.h"
#include "sky_noise.h"
#include "tl_switch.h"


static const char *const simulate_help =
    "usage: tidelock simulate [SCENARIO.ini] -o NAME [--spectra N] [--drive DB] [-q]\n"
    "\n"
    "Write a scenario's ADC voltages (the built-in default when no file is given) as a SigMF\n"
    "recording: NAME.sigmf-data holds ri16_le samples, inputs interleaved, each the ADC code\n"
    "left-aligned in 16 bits as the firmware receives it; NAME.sigmf-meta holds the sample rate,\n"
    "the inputs, the ADC bits, the seed, the sky model and the scenario as resolved. The recording\n"
    "has (taps - 1 + spectra) x 2 x channels samples per input: exactly what `tidelock replay`\n"
    "needs to integrate the scenario's spectra. Both files are written whole or not at all.\n"
    "\n"
    "options:\n"
    "  -o, --output NAME  the recording: NAME.sigmf-meta and NAME.sigmf-data\n"
    "      --spectra N    spectra the recording covers, from 1 to 16777216 and a multiple of\n"
    "                     [fidelity] blocks (default: the scenario's [integration] spectra)\n"
    "      --drive DB     override [sky] drive_db, from -40 to 12 dB\n"
    "  -q, --quiet        print nothing but errors\n"
    "  -h, --help         this text\n"
    "exit status: 0 written, 1 error (bad scenario file, I/O), 2 usage\n"
    "example: tidelock simulate docs/scenario-default.ini -o sky && tidelock replay sky.sigmf-meta -o out\n";


/* The generator, switched frame by frame (N samples) through the
 * firmware's calibration sequence exactly as the fidelity harness switches
 * it in `tidelock run`, so a replay sees the same samples. */
typedef struct sim_source {
    tl_sky *sky;
    tl_switch sw;
    int switching;
    uint32_t frame;    /* N */
    uint32_t in_frame; /* samples of the current frame already delivered */
} sim_source;

static void sky_source(void *state, int16_t *in0, int16_t *in1, size_t n)
{
    sim_source *src = state;
    for (size_t done = 0; done < n;) {
        if (src->in_frame == 0 && src->switching) {
            tl_sky_set_state(src->sky, tl_switch_state(&src->sw));
            tl_switch_advance(&src->sw);
        }
        size_t take = src->frame - src->in_frame;
        if (take > n - done)
            take = n - done;
        tl_sky_fill(src->sky, in0 + done, in1 != NULL ? in1 + done : NULL, take);
        src->in_frame = (uint32_t)((src->in_frame + take) % src->frame);
        done += take;
    }
}

/* The scenario file text, as `tidelock scenario --print` would write it. */
static char *scenario_text(const tl_scenario *s)
{
    char *text = NULL;
    size_t len = 0;
    FILE *m = open_memstream(&text, &len);
    if (m == NULL)
        return NULL;
    const int rc = tl_scenario_write(m, s);
    if (fclose(m) != 0 || rc != 0) {
        free(text);
        return NULL;
    }
    return text;
}

int tl_cmd_simulate(int argc, char **argv)
{
    static const struct option opts[] = { { "output", required_argument, NULL, 'o' },
                                          { "spectra", required_argument, NULL, 's' },
                                          { "drive", required_argument, NULL, 'd' },
                                          { "quiet", no_argument, NULL, 'q' },
                                          { "help", no_argument, NULL, 'h' },
                                          { NULL, 0, NULL, 0 } };
    const char *name = NULL, *spectra = NULL, *drive = NULL;
    int quiet = 0, c;
    opterr = 0;
    while ((c = getopt_long(argc, argv, ":o:qh", opts, NULL)) != -1) {
        switch (c) {
        case 'o': name = optarg; break;
        case 's': spectra = optarg; break;
        case 'd': drive = optarg; break;
        case 'q': quiet = 1; break;
        case 'h': fputs(simulate_help, stdout); return EXIT_OK;
        default: return tl_cli_bad_option("simulate", argv, c);
        }
    }
    if (argc - optind > 1)
        return tl_cli_usage("simulate", "expected at most one scenario file, got also '%s'", argv[optind + 1]);
    if (name == NULL || *name == '\0')
        return tl_cli_usage("simulate", "give the recording's name with -o NAME%s", "");
    tl_scenario s;
    tl_scenario_default(&s);
    char err[1024];
    const char *path = optind < argc ? argv[optind] : NULL;
    if (path != NULL && tl_scenario_load(path, &s, err, sizeof err) != 0) {
        fprintf(stderr, "tidelock simulate: %s\n", err);
        return EXIT_FAIL;
    }
    if (drive != NULL) {
        char *end = NULL;
        const double v = strtod(drive, &end);
        if (end == drive || *end != '\0' || !(v >= -40.0 && v <= 12.0))
            return tl_cli_usage("simulate", "--drive: '%s' is not a number of dB from -40 to 12", drive);
        s.drive_db = v;
    }
    if (spectra != NULL) {
        char *end = NULL;
        const unsigned long long v = strtoull(spectra, &end, 10);
        if (end == spectra || *end != '\0' || spectra[0] == '-' || v < 1 || v > TL_MAX_INTEGRATION)
            return tl_cli_usage("simulate", "--spectra: '%s' is not a whole number from 1 to 16777216", spectra);
        s.spectra = (uint32_t)v;
        if (tl_scenario_check(&s, path, err, sizeof err) != 0) {
            fprintf(stderr, "tidelock simulate: --spectra %s: %s (see tidelock simulate --help)\n", spectra, err);
            return EXIT_USAGE;
        }
    }
    /* NAME, NAME.sigmf-meta or NAME.sigmf-data all name the recording NAME */
    char base[4096];
    snprintf(base, sizeof base, "%s", name);
    const size_t bl = strlen(base), sl = strlen(".sigmf-meta");
    if (bl > sl && (strcmp(base + bl - sl, ".sigmf-meta") == 0 || strcmp(base + bl - sl, ".sigmf-data") == 0))
        base[bl - sl] = '\0';

    /* the generator exactly as `tidelock run` sets it up (run.c) */
    tl_sky *sky = tl_scenario_sky(&s);
    char *text = scenario_text(&s);
    if (sky == NULL || text == NULL) {
        fprintf(stderr, "tidelock simulate: %s: cannot start the noise generator (out of memory?)\n",
                path ? path : "built-in scenario");
        tl_sky_close(sky);
        free(text);
        return EXIT_FAIL;
    }
    sim_source src;
    memset(&src, 0, sizeof src);
    src.sky = sky;
    src.frame = s.cfg.points;
    src.switching = s.cfg.switch_steps > 0u;
    if (tl_switch_init(&src.sw, s.cfg.switch_steps, s.cfg.switch_state, s.cfg.switch_dwell, s.cfg.switch_discard) !=
        TL_OK) {
        fprintf(stderr, "tidelock simulate: %s: [switching] sequence is not a valid switch sequence\n",
                path ? path : "built-in scenario");
        tl_sky_close(sky);
        free(text);
        return EXIT_FAIL;
    }
    char hw[128];
    snprintf(hw, sizeof hw, "simulated %u-bit ADC (tidelock sky-noise generator)", s.cfg.adc_bits);
    tl_sigmf_desc d;
    memset(&d, 0, sizeof d);
    d.sample_rate_hz = s.sky.sample_rate_hz;
    d.inputs = s.cfg.inputs;
    d.adc_bits = s.cfg.adc_bits;
    d.adc_full_scale_v = s.adc_full_scale_v;
    d.samples = ((uint64_t)s.cfg.taps - 1u + s.spectra) * s.cfg.points;
    d.seed = s.sky.seed;
    d.description = s.description;
    d.hw = hw;
    d.scenario_text = text;
    const int rc = tl_sigmf_write(base, &d, sky_source, &src, err, sizeof err);
    const uint64_t clips0 = tl_sky_clipped(sky, 0), clips1 = tl_sky_clipped(sky, 1);
    tl_sky_close(sky);
    free(text);
    if (rc != 0) {
        fprintf(stderr, "tidelock simulate: %s\n", err);
        return EXIT_FAIL;
    }
    if (!quiet) {
        printf("wrote %s.sigmf-meta and %s.sigmf-data: ri16_le, %u input%s at %.6g MHz, %llu samples per input "
               "((%u - 1 + %u spectra) x %u points, %.1f MiB), seed %llu, drive %+.1f dB\n",
               base, base, d.inputs, d.inputs > 1 ? "s" : "", d.sample_rate_hz / 1e6, (unsigned long long)d.samples,
               s.cfg.taps, s.spectra, s.cfg.points, (double)d.samples * 2.0 * d.inputs / 1048576.0,
               (unsigned long long)d.seed, s.drive_db);
        printf("  ADC clips made by the generator: input 0: %llu", (unsigned long long)clips0);
        if (d.inputs > 1)
            printf(", input 1: %llu", (unsigned long long)clips1);
        printf("\n");
    }
    return EXIT_OK;
}
