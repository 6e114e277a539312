/*
 * plot.h - a small chart module over cairo (host only): line charts with
 * labelled axes, linear or logarithmic, and bar charts, each written as a
 * PNG and an SVG of the same drawing.
 *
 * Readable in black and white: series differ by dash pattern, marker and
 * gray level, never by colour alone. Every axis label is the caller's
 * text and should carry its unit ("frequency (MHz)"). Files are written
 * through tl_atomic_write (never half-written): BASE.png and BASE.svg.
 */
#ifndef TL_HOST_PLOT_H
#define TL_HOST_PLOT_H

#include <stddef.h>
#include <stdint.h>

#define TL_PLOT_WIDTH 900   /* pixels of the PNG; the SVG has the same size in points */
#define TL_PLOT_HEIGHT 540

enum { TL_PLOT_LINEAR = 0, TL_PLOT_LOG = 1 };
enum { TL_DASH_SOLID = 0, TL_DASH_DASHED = 1, TL_DASH_DOTTED = 2, TL_DASH_DASHDOT = 3, TL_DASH_NONE = 4 };
enum { TL_MARK_NONE = 0, TL_MARK_CIRCLE = 1, TL_MARK_SQUARE = 2, TL_MARK_TRIANGLE = 3, TL_MARK_CROSS = 4 };

typedef struct tl_plot_series {
    const char *label;       /* legend text (NULL: not in the legend) */
    const double *x, *y;     /* n points; non-finite points break the line */
    size_t n;
    unsigned dash;           /* TL_DASH_* (NONE: markers only) */
    unsigned marker;         /* TL_MARK_* */
    unsigned marker_every;   /* a marker every this many points (0: 1) */
    double gray;             /* 0 black .. 0.7 light gray */
    double width;            /* line width, pixels (0: 1.5) */
} tl_plot_series;

typedef struct tl_plot_chart {
    const char *title;
    const char *xlabel, *ylabel;   /* with units */
    unsigned xscale, yscale;       /* TL_PLOT_LINEAR or TL_PLOT_LOG */
    int auto_x, auto_y;            /* 1: range from the data (log: positive values only) */
    double xmin, xmax, ymin, ymax; /* when not automatic */
    const tl_plot_series *series;
    size_t nseries;
    /* optional shaded band (e.g. +-1 sigma) under the series */
    const double *band_x, *band_lo, *band_hi;
    size_t band_n;
    const char *band_label;
    const char *note;              /* one line under the title (may be NULL) */
} tl_plot_chart;

/* One bar: what is used against what is allowed, with its unit. */
typedef struct tl_plot_bar {
    const char *name;
    double used;
    double allocation;       /* <= 0: none */
    const char *unit;
} tl_plot_bar;

enum { TL_BARS_ABSOLUTE = 0,   /* bar length = used, the allocation a tick mark */
       TL_BARS_FRACTION = 1 }; /* bar length = used / allocation in %, a line at 100 % */
/* In TL_BARS_FRACTION mode the axis ends at this percentage at most; a
 * longer bar is cut there (hatched, as every bar over its allocation) and
 * its figure is in the text beside it, so one runaway budget does not
 * flatten the others. */
#define TL_BARS_FRACTION_MAX 300.0

/* Draw a line chart into BASE.png and BASE.svg. Returns 0, or -1 with one
 * line in err (cap bytes) naming the file. */
int tl_plot_lines(const char *base, const tl_plot_chart *c, char *err, size_t cap);

/* Draw horizontal bars (n at most 32), one per row, labelled with name and
 * "used unit of allocation unit". xlabel names the axis with its unit.
 * Returns 0, or -1 with one line in err. */
int tl_plot_bars(const char *base, const char *title, const char *xlabel, const tl_plot_bar *bars, size_t n,
                 unsigned mode, char *err, size_t cap);

#endif
