/* plot.c - line and bar charts over cairo, PNG and SVG (see plot.h). */
#include "plot.h"

#include <cairo/cairo-svg.h>
#include <cairo/cairo.h>
#include <fontconfig/fontconfig.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "atomic_file.h"

#define FONT "DejaVu Sans"
#define MAX_TICKS 24

/* ---- output: draw once per surface, write through tl_atomic_write ------- */

typedef struct membuf {
    unsigned char *p;
    size_t len, cap;
    int bad;
} membuf;

static cairo_status_t mem_write(void *ctx, const unsigned char *data, unsigned int len)
{
    membuf *m = ctx;
    if (m->len + len > m->cap) {
        size_t cap = m->cap ? m->cap : 65536u;
        while (cap < m->len + len)
            cap *= 2u;
        unsigned char *q = realloc(m->p, cap);
        if (q == NULL) {
            m->bad = 1;
            return CAIRO_STATUS_WRITE_ERROR;
        }
        m->p = q;
        m->cap = cap;
    }
    memcpy(m->p + m->len, data, len);
    m->len += len;
    return CAIRO_STATUS_SUCCESS;
}

static int put_bytes(FILE *f, void *ctx)
{
    const membuf *m = ctx;
    return fwrite(m->p, 1, m->len, f) == m->len ? 0 : -1;
}

typedef void (*draw_fn)(cairo_t *cr, const void *what);

/* Give back what cairo and fontconfig cache between drawings (fonts,
 * patterns), so a finished chart leaves no memory behind: a leak checker
 * sees none, and no state carries from one chart to the next. */
static void release_caches(void)
{
    cairo_debug_reset_static_data();
    FcFini();
}

static int write_one(const char *base, draw_fn draw, const void *what, char *err, size_t cap);

static int write_both(const char *base, draw_fn draw, const void *what, char *err, size_t cap)
{
    const int rc = write_one(base, draw, what, err, cap);
    release_caches();
    return rc;
}

static int write_one(const char *base, draw_fn draw, const void *what, char *err, size_t cap)
{
    char path[4200];
    /* PNG */
    cairo_surface_t *img = cairo_image_surface_create(CAIRO_FORMAT_RGB24, TL_PLOT_WIDTH, TL_PLOT_HEIGHT);
    cairo_t *cr = cairo_create(img);
    draw(cr, what);
    cairo_destroy(cr);
    membuf m = { 0 };
    cairo_status_t st = cairo_surface_write_to_png_stream(img, mem_write, &m);
    cairo_surface_destroy(img);
    snprintf(path, sizeof path, "%s.png", base);
    if (st != CAIRO_STATUS_SUCCESS || m.bad) {
        snprintf(err, cap, "%s: cannot encode the PNG: %s", path, cairo_status_to_string(st));
        free(m.p);
        return -1;
    }
    int rc = tl_atomic_write(path, put_bytes, &m, err, cap);
    free(m.p);
    if (rc != 0)
        return -1;
    /* SVG: the same drawing on a vector surface */
    membuf v = { 0 };
    cairo_surface_t *svg = cairo_svg_surface_create_for_stream(mem_write, &v, TL_PLOT_WIDTH, TL_PLOT_HEIGHT);
    cr = cairo_create(svg);
    draw(cr, what);
    cairo_destroy(cr);
    cairo_surface_finish(svg);
    st = cairo_surface_status(svg);
    cairo_surface_destroy(svg);
    snprintf(path, sizeof path, "%s.svg", base);
    if (st != CAIRO_STATUS_SUCCESS || v.bad) {
        snprintf(err, cap, "%s: cannot encode the SVG: %s", path, cairo_status_to_string(st));
        free(v.p);
        return -1;
    }
    rc = tl_atomic_write(path, put_bytes, &v, err, cap);
    free(v.p);
    return rc;
}

/* ---- text ------------------------------------------------------------------ */

static void text_at(cairo_t *cr, double x, double y, const char *s, double size, double ax, double ay, int bold)
{
    cairo_select_font_face(cr, FONT, CAIRO_FONT_SLANT_NORMAL, bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, size);
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    cairo_move_to(cr, x - ax * e.width - e.x_bearing, y - ay * e.height - e.y_bearing);
    cairo_show_text(cr, s);
}

static double text_width(cairo_t *cr, const char *s, double size)
{
    cairo_select_font_face(cr, FONT, CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, size);
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    return e.x_advance;
}

static void fmt_tick(char *out, size_t cap, double v)
{
    if (v == 0.0)
        snprintf(out, cap, "0");
    else if (fabs(v) >= 1e5 || fabs(v) < 1e-3) {
        /* 2e6, 1.5e-4: the mantissa as short as it is exact, no '+' or padding */
        const int e = (int)floor(log10(fabs(v)) + 1e-9);
        snprintf(out, cap, "%.3ge%d", v / pow(10.0, e), e);
    }
    else
        snprintf(out, cap, "%g", v);
}

/* ---- axes ------------------------------------------------------------------ */

typedef struct axis {
    unsigned scale;
    double lo, hi;        /* data range (log: positive) */
    double p0, p1;        /* pixel positions of lo and hi */
} axis;

static double to_px(const axis *a, double v)
{
    if (a->scale == TL_PLOT_LOG)
        return a->p0 + (log10(v) - log10(a->lo)) / (log10(a->hi) - log10(a->lo)) * (a->p1 - a->p0);
    return a->p0 + (v - a->lo) / (a->hi - a->lo) * (a->p1 - a->p0);
}

/* Tick values: 1-2-5 steps (linear), decades (log; with 2 and 5 when the
 * range spans fewer than three decades). Returns the count. */
static unsigned ticks(const axis *a, double *t)
{
    unsigned n = 0;
    if (a->scale == TL_PLOT_LOG) {
        const int d0 = (int)floor(log10(a->lo)), d1 = (int)ceil(log10(a->hi));
        const int fine = d1 - d0 <= 3;
        for (int d = d0; d <= d1 && n < MAX_TICKS; d++)
            for (int m = 1; m <= 5 && n < MAX_TICKS; m += (m == 1 ? 1 : 3)) {
                if (!fine && m != 1)
                    continue;
                const double v = m * pow(10.0, d);
                if (v >= a->lo * (1 - 1e-9) && v <= a->hi * (1 + 1e-9))
                    t[n++] = v;
            }
        return n;
    }
    const double span = a->hi - a->lo, raw = span / 6.0, mag = pow(10.0, floor(log10(raw)));
    const double step = raw / mag < 1.5 ? mag : raw / mag < 3.5 ? 2 * mag : raw / mag < 7.5 ? 5 * mag : 10 * mag;
    const double first = ceil(a->lo / step - 1e-9) * step;
    for (unsigned j = 0; n < MAX_TICKS; j++) {
        const double v = first + j * step; /* an integer counter: no drift from repeated additions */
        if (v > a->hi + 1e-9 * span)
            break;
        t[n++] = fabs(v) < 1e-12 * span ? 0.0 : v;
    }
    return n;
}

static void nice_range(axis *a)
{
    if (!(a->hi > a->lo)) {
        const double c = a->lo;
        a->lo = a->scale == TL_PLOT_LOG ? c / 2.0 : c - (c != 0.0 ? fabs(c) * 0.1 : 1.0);
        a->hi = a->scale == TL_PLOT_LOG ? c * 2.0 : c + (c != 0.0 ? fabs(c) * 0.1 : 1.0);
    }
    if (a->scale == TL_PLOT_LOG) {
        a->lo = pow(10.0, floor(log10(a->lo) * 4.0) / 4.0);
        a->hi = pow(10.0, ceil(log10(a->hi) * 4.0) / 4.0);
    } else {
        const double pad = 0.04 * (a->hi - a->lo);
        a->lo -= pad;
        a->hi += pad;
    }
}

static void set_dash(cairo_t *cr, unsigned dash)
{
    static const double dashed[] = { 9.0, 5.0 }, dotted[] = { 1.5, 3.5 }, dashdot[] = { 9.0, 4.0, 1.5, 4.0 };
    switch (dash) {
    case TL_DASH_DASHED: cairo_set_dash(cr, dashed, 2, 0.0); break;
    case TL_DASH_DOTTED: cairo_set_dash(cr, dotted, 2, 0.0); break;
    case TL_DASH_DASHDOT: cairo_set_dash(cr, dashdot, 4, 0.0); break;
    default: cairo_set_dash(cr, NULL, 0, 0.0); break;
    }
}

static void marker(cairo_t *cr, unsigned kind, double x, double y)
{
    const double r = 3.5;
    cairo_set_dash(cr, NULL, 0, 0.0);
    cairo_new_path(cr);
    switch (kind) {
    case TL_MARK_CIRCLE: cairo_arc(cr, x, y, r, 0.0, 2.0 * M_PI); break;
    case TL_MARK_SQUARE: cairo_rectangle(cr, x - r, y - r, 2 * r, 2 * r); break;
    case TL_MARK_TRIANGLE:
        cairo_move_to(cr, x, y - r * 1.2);
        cairo_line_to(cr, x + r * 1.1, y + r * 0.8);
        cairo_line_to(cr, x - r * 1.1, y + r * 0.8);
        cairo_close_path(cr);
        break;
    case TL_MARK_CROSS:
        cairo_move_to(cr, x - r, y - r);
        cairo_line_to(cr, x + r, y + r);
        cairo_move_to(cr, x - r, y + r);
        cairo_line_to(cr, x + r, y - r);
        break;
    default: return;
    }
    cairo_set_line_width(cr, 1.2);
    cairo_stroke(cr);
}

static int usable(unsigned scale, double v)
{
    return isfinite(v) && (scale != TL_PLOT_LOG || v > 0.0);
}

/* Vertical grid lines at the x ticks between T and B, tick marks and their
 * labels below B. */
static void x_grid(cairo_t *cr, const axis *ax, double T, double B)
{
    double t[MAX_TICKS];
    char s[64];
    cairo_set_line_width(cr, 1.0);
    const unsigned n = ticks(ax, t);
    for (unsigned i = 0; i < n; i++) {
        const double px = to_px(ax, t[i]);
        cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
        cairo_move_to(cr, px, T);
        cairo_line_to(cr, px, B);
        cairo_stroke(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_move_to(cr, px, B);
        cairo_line_to(cr, px, B + 5);
        cairo_stroke(cr);
        fmt_tick(s, sizeof s, t[i]);
        text_at(cr, px, B + 8, s, 12, 0.5, 0.0, 0);
    }
}

static void frame_and_labels(cairo_t *cr, const char *title, const char *note, const char *xlabel,
                             const char *ylabel, double L, double T, double R, double B)
{
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    cairo_set_source_rgb(cr, 0, 0, 0);
    if (title != NULL)
        text_at(cr, TL_PLOT_WIDTH / 2.0, 14, title, 16, 0.5, 0.0, 1);
    if (note != NULL)
        text_at(cr, TL_PLOT_WIDTH / 2.0, 36, note, 11.5, 0.5, 0.0, 0);
    if (xlabel != NULL)
        text_at(cr, (L + R) / 2.0, TL_PLOT_HEIGHT - 10, xlabel, 13, 0.5, 1.0, 0);
    if (ylabel != NULL) {
        cairo_save(cr);
        cairo_translate(cr, 16, (T + B) / 2.0);
        cairo_rotate(cr, -M_PI / 2.0);
        text_at(cr, 0, 0, ylabel, 13, 0.5, 0.0, 0);
        cairo_restore(cr);
    }
}

static void draw_lines(cairo_t *cr, const void *what)
{
    const tl_plot_chart *c = what;
    const double L = 92, R = TL_PLOT_WIDTH - 24, T = c->note ? 58 : 44, B = TL_PLOT_HEIGHT - 56;
    axis ax = { c->xscale, c->xmin, c->xmax, L, R }, ay = { c->yscale, c->ymin, c->ymax, B, T };
    if (c->auto_x || c->auto_y) {
        double x0 = INFINITY, x1 = -INFINITY, y0 = INFINITY, y1 = -INFINITY;
        for (size_t s = 0; s < c->nseries; s++)
            for (size_t i = 0; i < c->series[s].n; i++) {
                const double x = c->series[s].x[i], y = c->series[s].y[i];
                if (!usable(c->xscale, x) || !usable(c->yscale, y))
                    continue;
                x0 = fmin(x0, x);
                x1 = fmax(x1, x);
                y0 = fmin(y0, y);
                y1 = fmax(y1, y);
            }
        for (size_t i = 0; i < c->band_n; i++) {
            if (usable(c->yscale, c->band_lo[i]))
                y0 = fmin(y0, c->band_lo[i]);
            if (usable(c->yscale, c->band_hi[i]))
                y1 = fmax(y1, c->band_hi[i]);
        }
        if (!isfinite(x0)) {
            x0 = 1;
            x1 = 10;
            y0 = 1;
            y1 = 10;
        }
        if (c->auto_x) {
            ax.lo = x0;
            ax.hi = x1;
            if (!(x1 > x0))
                nice_range(&ax);
        }
        if (c->auto_y) {
            ay.lo = y0;
            ay.hi = y1;
            nice_range(&ay);
        }
    }
    frame_and_labels(cr, c->title, c->note, c->xlabel, c->ylabel, L, T, R, B);
    /* grid and ticks */
    double t[MAX_TICKS];
    char s[64];
    x_grid(cr, &ax, T, B);
    unsigned n = ticks(&ay, t);
    for (unsigned i = 0; i < n; i++) {
        const double py = to_px(&ay, t[i]);
        cairo_set_source_rgb(cr, 0.88, 0.88, 0.88);
        cairo_move_to(cr, L, py);
        cairo_line_to(cr, R, py);
        cairo_stroke(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_move_to(cr, L - 5, py);
        cairo_line_to(cr, L, py);
        cairo_stroke(cr);
        fmt_tick(s, sizeof s, t[i]);
        text_at(cr, L - 8, py, s, 12, 1.0, 0.5, 0);
    }
    cairo_save(cr);
    cairo_rectangle(cr, L, T, R - L, B - T);
    cairo_clip(cr);
    /* band */
    if (c->band_n > 1u) {
        cairo_set_source_rgb(cr, 0.82, 0.82, 0.82);
        int open = 0;
        for (size_t i = 0; i < c->band_n; i++) {
            if (!usable(c->xscale, c->band_x[i]) || !usable(c->yscale, c->band_hi[i]))
                continue;
            const double px = to_px(&ax, c->band_x[i]), py = to_px(&ay, c->band_hi[i]);
            if (!open)
                cairo_move_to(cr, px, py);
            else
                cairo_line_to(cr, px, py);
            open = 1;
        }
        for (size_t i = c->band_n; i-- > 0;) {
            if (!usable(c->xscale, c->band_x[i]) || !usable(c->yscale, c->band_lo[i]))
                continue;
            cairo_line_to(cr, to_px(&ax, c->band_x[i]), to_px(&ay, c->band_lo[i]));
        }
        cairo_close_path(cr);
        cairo_fill(cr);
    }
    /* zero line on a linear y axis that spans it */
    if (ay.scale == TL_PLOT_LINEAR && ay.lo < 0.0 && ay.hi > 0.0) {
        cairo_set_source_rgb(cr, 0.5, 0.5, 0.5);
        cairo_set_line_width(cr, 0.8);
        cairo_move_to(cr, L, to_px(&ay, 0.0));
        cairo_line_to(cr, R, to_px(&ay, 0.0));
        cairo_stroke(cr);
    }
    for (size_t k = 0; k < c->nseries; k++) {
        const tl_plot_series *se = &c->series[k];
        cairo_set_source_rgb(cr, se->gray, se->gray, se->gray);
        if (se->dash != TL_DASH_NONE) {
            cairo_set_line_width(cr, se->width > 0.0 ? se->width : 1.5);
            set_dash(cr, se->dash);
            int open = 0;
            for (size_t i = 0; i < se->n; i++) {
                if (!usable(c->xscale, se->x[i]) || !usable(c->yscale, se->y[i])) {
                    open = 0;
                    continue;
                }
                const double px = to_px(&ax, se->x[i]), py = to_px(&ay, se->y[i]);
                if (open)
                    cairo_line_to(cr, px, py);
                else
                    cairo_move_to(cr, px, py);
                open = 1;
            }
            cairo_stroke(cr);
        }
        if (se->marker != TL_MARK_NONE) {
            const size_t every = se->marker_every ? se->marker_every : 1u;
            for (size_t i = 0; i < se->n; i += every)
                if (usable(c->xscale, se->x[i]) && usable(c->yscale, se->y[i]))
                    marker(cr, se->marker, to_px(&ax, se->x[i]), to_px(&ay, se->y[i]));
        }
    }
    cairo_restore(cr);
    cairo_set_dash(cr, NULL, 0, 0.0);
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 1.2);
    cairo_rectangle(cr, L, T, R - L, B - T);
    cairo_stroke(cr);
    /* legend, top right inside the frame */
    unsigned rows = c->band_label != NULL && c->band_n > 1u;
    double wmax = c->band_label ? text_width(cr, c->band_label, 12) : 0.0;
    for (size_t k = 0; k < c->nseries; k++)
        if (c->series[k].label != NULL) {
            rows++;
            wmax = fmax(wmax, text_width(cr, c->series[k].label, 12));
        }
    if (rows == 0)
        return;
    const double lw = wmax + 60, lx = R - lw - 8, ly = T + 8;
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_rectangle(cr, lx, ly, lw, rows * 18.0 + 6);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
    cairo_set_line_width(cr, 0.8);
    cairo_stroke(cr);
    double y = ly + 12;
    for (size_t k = 0; k < c->nseries; k++) {
        const tl_plot_series *se = &c->series[k];
        if (se->label == NULL)
            continue;
        cairo_set_source_rgb(cr, se->gray, se->gray, se->gray);
        if (se->dash != TL_DASH_NONE) {
            cairo_set_line_width(cr, se->width > 0.0 ? se->width : 1.5);
            set_dash(cr, se->dash);
            cairo_move_to(cr, lx + 8, y);
            cairo_line_to(cr, lx + 44, y);
            cairo_stroke(cr);
        }
        if (se->marker != TL_MARK_NONE)
            marker(cr, se->marker, lx + 26, y);
        cairo_set_source_rgb(cr, 0, 0, 0);
        text_at(cr, lx + 52, y, se->label, 12, 0.0, 0.5, 0);
        y += 18;
    }
    if (c->band_label != NULL && c->band_n > 1u) {
        cairo_set_source_rgb(cr, 0.82, 0.82, 0.82);
        cairo_rectangle(cr, lx + 8, y - 6, 36, 12);
        cairo_fill(cr);
        cairo_set_source_rgb(cr, 0, 0, 0);
        text_at(cr, lx + 52, y, c->band_label, 12, 0.0, 0.5, 0);
    }
}

int tl_plot_lines(const char *base, const tl_plot_chart *c, char *err, size_t cap)
{
    for (size_t k = 0; k < c->nseries; k++)
        if (c->series[k].x == NULL || c->series[k].y == NULL) {
            snprintf(err, cap, "%s.png: series %zu has no data", base, k);
            return -1;
        }
    if (!c->auto_x && !(c->xmax > c->xmin)) {
        snprintf(err, cap, "%s.png: x range [%g, %g] is empty", base, c->xmin, c->xmax);
        return -1;
    }
    if (!c->auto_y && !(c->ymax > c->ymin)) {
        snprintf(err, cap, "%s.png: y range [%g, %g] is empty", base, c->ymin, c->ymax);
        return -1;
    }
    return write_both(base, draw_lines, c, err, cap);
}

/* ---- bars ------------------------------------------------------------------ */

typedef struct bar_chart {
    const char *title, *xlabel;
    const tl_plot_bar *bars;
    size_t n;
    unsigned mode;
} bar_chart;

static void fmt_value(char *out, size_t cap, double v, const char *unit)
{
    const char *u = unit ? unit : "";
    if (v != 0.0 && (fabs(v) >= 1e6 || fabs(v) < 1e-2))
        snprintf(out, cap, "%.3g%s%s", v, *u ? " " : "", u);
    else
        snprintf(out, cap, "%.4g%s%s", v, *u ? " " : "", u);
}

static void draw_bars(cairo_t *cr, const void *what)
{
    const bar_chart *b = what;
    double name_w = 0.0;
    for (size_t i = 0; i < b->n; i++)
        name_w = fmax(name_w, text_width(cr, b->bars[i].name, 12.5));
    const double L = fmin(name_w + 24, TL_PLOT_WIDTH * 0.4), R = TL_PLOT_WIDTH - 200, T = 50,
                 B = TL_PLOT_HEIGHT - 56;
    frame_and_labels(cr, b->title, NULL, b->xlabel, NULL, L, T, R, B);
    axis ax = { TL_PLOT_LINEAR, 0.0, 0.0, L, R };
    for (size_t i = 0; i < b->n; i++) {
        const tl_plot_bar *r = &b->bars[i];
        const double v = b->mode == TL_BARS_FRACTION ? (r->allocation > 0 ? 100.0 * r->used / r->allocation : 0.0)
                                                     : fmax(r->used, r->allocation > 0 ? r->allocation : 0.0);
        if (isfinite(v))
            ax.hi = fmax(ax.hi, v);
    }
    if (b->mode == TL_BARS_FRACTION)
        ax.hi = fmin(fmax(ax.hi, 100.0), TL_BARS_FRACTION_MAX); /* beyond: the bar runs off the axis, the text tells */
    if (!(ax.hi > 0.0))
        ax.hi = 1.0;
    ax.hi *= 1.08;
    char s[160], s2[64];
    x_grid(cr, &ax, T, B);
    const double row = (B - T) / (double)(b->n ? b->n : 1u), h = fmin(row * 0.6, 40.0);
    for (size_t i = 0; i < b->n; i++) {
        const tl_plot_bar *r = &b->bars[i];
        const double yc = T + row * ((double)i + 0.5);
        const double v = b->mode == TL_BARS_FRACTION ? (r->allocation > 0 ? 100.0 * r->used / r->allocation : 0.0)
                                                     : r->used;
        const double x1 = to_px(&ax, fmin(fmax(v, 0.0), ax.hi));
        /* filled dark gray, with a hatch when over the allocation */
        const int over = r->allocation > 0 && r->used > r->allocation;
        cairo_set_source_rgb(cr, 0.45, 0.45, 0.45);
        cairo_rectangle(cr, L, yc - h / 2, x1 - L, h);
        cairo_fill(cr);
        if (over) {
            cairo_save(cr);
            cairo_rectangle(cr, L, yc - h / 2, x1 - L, h);
            cairo_clip(cr);
            cairo_set_source_rgb(cr, 1, 1, 1);
            cairo_set_line_width(cr, 2.0);
            for (unsigned j = 0; L - h + 8.0 * j < x1; j++) {
                const double x = L - h + 8.0 * j;
                cairo_move_to(cr, x, yc + h / 2);
                cairo_line_to(cr, x + h, yc - h / 2);
            }
            cairo_stroke(cr);
            cairo_restore(cr);
        }
        cairo_set_source_rgb(cr, 0, 0, 0);
        cairo_set_line_width(cr, 1.0);
        cairo_rectangle(cr, L, yc - h / 2, x1 - L, h);
        cairo_stroke(cr);
        /* the allocation: a heavy vertical mark */
        if (r->allocation > 0) {
            const double xa = to_px(&ax, b->mode == TL_BARS_FRACTION ? 100.0 : r->allocation);
            cairo_set_line_width(cr, 3.0);
            cairo_move_to(cr, xa, yc - h / 2 - 5);
            cairo_line_to(cr, xa, yc + h / 2 + 5);
            cairo_stroke(cr);
        }
        text_at(cr, L - 8, yc, r->name, 12.5, 1.0, 0.5, 0);
        fmt_value(s2, sizeof s2, r->used, r->unit);
        if (r->allocation > 0) {
            char a[64];
            fmt_value(a, sizeof a, r->allocation, r->unit);
            snprintf(s, sizeof s, "%s of %s (%.1f%%)", s2, a, 100.0 * r->used / r->allocation);
        } else {
            snprintf(s, sizeof s, "%s", s2);
        }
        text_at(cr, R + 8, yc, s, 11.5, 0.0, 0.5, 0);
    }
    cairo_set_source_rgb(cr, 0, 0, 0);
    cairo_set_line_width(cr, 1.2);
    cairo_move_to(cr, L, T);
    cairo_line_to(cr, L, B);
    cairo_line_to(cr, R, B);
    cairo_stroke(cr);
}

int tl_plot_bars(const char *base, const char *title, const char *xlabel, const tl_plot_bar *bars, size_t n,
                 unsigned mode, char *err, size_t cap)
{
    if (n == 0u || n > 32u) {
        snprintf(err, cap, "%s.png: %zu bars (allowed 1 to 32)", base, n);
        return -1;
    }
    for (size_t i = 0; i < n; i++)
        if (bars[i].name == NULL || !isfinite(bars[i].used) || bars[i].used < 0.0) {
            snprintf(err, cap, "%s.png: bar %zu: used = %g must be finite and >= 0", base, i, bars[i].used);
            return -1;
        }
    const bar_chart b = { title, xlabel, bars, n, mode };
    return write_both(base, draw_bars, &b, err, cap);
}
