/* spectral_kurtosis.c - SK estimator, moments and thresholds (see spectral_kurtosis.h). */
#include "spectral_kurtosis.h"

#include <math.h>
#include <stddef.h>

double tl_sk_estimate(double s1, double s2, uint32_t m, uint32_t n)
{
    if (m < 2u || n < 1u || !(s1 > 0.0) || !(s2 >= 0.0) || isinf(s1) || isinf(s2))
        return NAN;
    const double M = (double)m, K = M * (double)n;
    return (K + 1.0) / (M - 1.0) * (M * s2 / (s1 * s1) - 1.0);
}

double tl_sk_central_moment(uint32_t m, uint32_t n, unsigned order)
{
    if (m < 2u || n < 1u)
        return NAN;
    const double M = (double)m, k = (double)n, K = M * k;
    const double r = M / (M - 1.0); /* M / (M - 1) and M / (K + j) keep every factor near 1 */
    const double kk = k * (k + 1.0);
    switch (order) {
    case 2:
        return 2.0 * kk * r * (M / (K + 2.0)) / (K + 3.0);
    case 3: {
        const double poly = k * (M * k + 4.0 * M - 5.0) - 2.0;
        return 8.0 * kk * r * r * (M / (K + 2.0)) * (poly / (K + 3.0)) / ((K + 4.0) * (K + 5.0));
    }
    case 4: {
        const double k2 = k * k, k3 = k2 * k, k4 = k3 * k, M2 = M * M, M3 = M2 * M;
        const double poly = M3 * k4 + M3 * k3 + 3.0 * M2 * k4 + 68.0 * M2 * k3 + 125.0 * M2 * k2 - 93.0 * M * k3 -
                            245.0 * M * k2 - 32.0 * M * k + 84.0 * k2 + 48.0 * k + 24.0;
        double q = poly;
        for (int j = 2; j <= 7; j++)
            q /= K + (double)j;
        return 12.0 * kk * r * r * r * M * q;
    }
    default:
        return NAN;
    }
}

double tl_sk_variance(uint32_t m, uint32_t n)
{
    return tl_sk_central_moment(m, n, 2);
}

/* ---- composite Gauss-Legendre quadrature ----------------------------------------
 * GL_NODES-point rule on each of GL_PANELS equal panels. The integrands below
 * are smooth and unimodal; each range is cut where the log-integrand has
 * fallen CUT_DROP below its peak (e^-75 ~ 3e-33), so nothing that matters
 * for a tail of 1e-12 or more is left out. */
#define GL_NODES 10
#define GL_PANELS 64
#define CUT_DROP 75.0

typedef struct gl_rule {
    double x[GL_NODES], w[GL_NODES]; /* nodes and weights on [-1, 1] */
} gl_rule;

/* Nodes by Newton's method on the Legendre polynomial (three-term
 * recurrence), weights 2 / ((1 - x^2) P_n'(x)^2). */
static void gl_make(gl_rule *g)
{
    const int n = GL_NODES;
    for (int i = 0; i < n; i++) {
        double z = cos(M_PI * ((double)i + 0.75) / ((double)n + 0.5)), dp = 1.0;
        for (int it = 0; it < 100; it++) {
            double p0 = 1.0, p1 = z;
            for (int j = 2; j <= n; j++) {
                const double p2 = ((2.0 * j - 1.0) * z * p1 - (j - 1.0) * p0) / (double)j;
                p0 = p1;
                p1 = p2;
            }
            dp = (double)n * (z * p1 - p0) / (z * z - 1.0);
            const double dz = p1 / dp;
            z -= dz;
            if (fabs(dz) < 1e-16)
                break;
        }
        g->x[i] = z;
        g->w[i] = 2.0 / ((1.0 - z * z) * dp * dp);
    }
}

/* ---- lower tail: conditional saddlepoint ---------------------------------------
 * In units y = P / (N theta), the M power values are i.i.d. Gamma(N, 1/N)
 * (mean 1); SK depends only on G = sum (P_j / S1)^2 = (SK / A + 1) / M,
 * A = (M N + 1) / (M - 1), and G is independent of S1. So
 *     P(SK < t) = P(sum y_j^2 <= G M^2 | sum y_j = M),
 * the conditional law of a sum of i.i.d. pairs (y^2, y), which is what the
 * double saddlepoint approximation of I. M. Skovgaard (J. Appl. Probab.
 * 24, 875, 1987) gives with relative error O(1/M). The joint cumulant
 * generating function needs E exp(a y^2 + b y), finite for a < 0: the
 * lower tail only (the upper tail of SK comes from single large powers,
 * which have no such transform; see prob_above). */

typedef struct tilt {
    double log_mass; /* log of the integral of exp(g(y) - g0(y0)) */
    double m1, m2, m3, m4; /* E y^j under the tilted law */
} tilt;

/* log density of the base law minus its value at the base mode, plus the
 * tilt a y^2 + b y: (N - 1) log y - N y + b y + a y^2 - C, written with
 * log1p so that it stays exact to rounding for large N. */
static double tilt_log(double k, double a, double b, double y)
{
    double base;
    if (k == 1.0) {
        base = -y;
    } else {
        const double y0 = (k - 1.0) / k, d = y / y0 - 1.0;
        base = (k - 1.0) * (log1p(d) - d);
    }
    return base + b * y + a * y * y;
}

/* Moments of the density proportional to y^(k-1) exp(-k y + b y + a y^2)
 * on y > 0 (needs a < 0, or a = 0 and b < k). */
static void tilt_moments(const gl_rule *gl, double k, double a, double b, tilt *t)
{
    const double al = -a, be = k - b;
    double mode;
    if (k == 1.0)
        mode = al > 0.0 ? fmax(0.0, -be / (2.0 * al)) : 0.0;
    else {
        const double d = sqrt(be * be + 8.0 * al * (k - 1.0));
        mode = be > 0.0 ? 2.0 * (k - 1.0) / (be + d) : (d - be) / (4.0 * al);
    }
    double width;
    if (mode > 0.0)
        width = 1.0 / sqrt((k - 1.0) / (mode * mode) + 2.0 * al);
    else
        width = fmin(be > 0.0 ? 1.0 / be : INFINITY, al > 0.0 ? 1.0 / sqrt(2.0 * al) : INFINITY);
    const double top = mode > 0.0 ? tilt_log(k, a, b, mode) : tilt_log(k, a, b, 0.0);
    double hi = mode + width, lo = mode > 0.0 ? mode - width : 0.0;
    for (int i = 0; i < 200 && tilt_log(k, a, b, hi) > top - CUT_DROP; i++)
        hi = mode + 2.0 * (hi - mode);
    for (int i = 0; i < 200 && lo > 0.0 && tilt_log(k, a, b, lo) > top - CUT_DROP; i++)
        lo = mode - 2.0 * (mode - lo);
    lo = fmax(lo, 0.0);
    const double half = 0.5 * (hi - lo) / GL_PANELS;
    double s0 = 0.0, s1 = 0.0, s2 = 0.0, s3 = 0.0, s4 = 0.0;
    for (int p = 0; p < GL_PANELS; p++) {
        const double mid = lo + (2.0 * p + 1.0) * half;
        for (int i = 0; i < GL_NODES; i++) {
            const double y = mid + half * gl->x[i];
            const double v = gl->w[i] * exp(tilt_log(k, a, b, y) - top);
            s0 += v;
            s1 += v * y;
            s2 += v * y * y;
            s3 += v * y * y * y;
            s4 += v * y * y * y * y;
        }
    }
    t->log_mass = top + log(s0 * half);
    t->m1 = s1 / s0;
    t->m2 = s2 / s0;
    t->m3 = s3 / s0;
    t->m4 = s4 / s0;
}

double tl_sk_prob_below(uint32_t m, uint32_t n, double t)
{
    if (m < 2u || n < 1u || isnan(t))
        return NAN;
    const double sd = sqrt(tl_sk_variance(m, n));
    if (t > 1.0 - 0.01 * sd)
        return NAN;
    if (t <= 0.0)
        return 0.0;
    const double M = (double)m, k = (double)n, A = (M * k + 1.0) / (M - 1.0);
    const double target2 = t / A + 1.0; /* E y^2 wanted: G M */
    gl_rule gl;
    gl_make(&gl);
    tilt base;
    tilt_moments(&gl, k, 0.0, 0.0, &base);
    /* start from the linear response of the base law */
    const double v11 = base.m2 - base.m1 * base.m1, v12 = base.m3 - base.m2 * base.m1,
                 v22 = base.m4 - base.m2 * base.m2;
    double a = (target2 - base.m2) / (v22 - v12 * v12 / v11), b = -a * v12 / v11;
    if (!(a < 0.0))
        return NAN;
    tilt cur;
    tilt_moments(&gl, k, a, b, &cur);
    int done = 0;
    for (int it = 0; it < 200 && !done; it++) {
        const double g2 = cur.m2 - target2, g1 = cur.m1 - 1.0;
        const double h22 = cur.m4 - cur.m2 * cur.m2, h21 = cur.m3 - cur.m2 * cur.m1, h11 = cur.m2 - cur.m1 * cur.m1;
        if (fabs(g2) <= 1e-12 * target2 && fabs(g1) <= 1e-12) {
            done = 1;
            break;
        }
        const double det = h22 * h11 - h21 * h21;
        const double da = -(h11 * g2 - h21 * g1) / det, db = -(h22 * g1 - h21 * g2) / det;
        /* damped step on the convex function log_mass - a target2 - b; near
         * the root (where rounding hides the decrease) the full step */
        const int near = fabs(g2) < 1e-6 * target2 && fabs(g1) < 1e-6;
        const double f0 = cur.log_mass - a * target2 - b;
        double lam = 1.0;
        tilt next;
        int ok = 0;
        for (int j = 0; j < 60; j++) {
            lam = ldexp(1.0, -j); /* 1, 1/2, 1/4, ... exactly */
            if (!(a + lam * da < 0.0))
                continue;
            tilt_moments(&gl, k, a + lam * da, b + lam * db, &next);
            if (near || next.log_mass - (a + lam * da) * target2 - (b + lam * db) <= f0) {
                ok = 1;
                break;
            }
        }
        if (!ok)
            break;
        a += lam * da;
        b += lam * db;
        cur = next;
    }
    if (!done)
        return NAN;
    const double kl = a * target2 + b - (cur.log_mass - base.log_mass); /* per-term divergence, >= 0 */
    const double h22 = cur.m4 - cur.m2 * cur.m2, h21 = cur.m3 - cur.m2 * cur.m1, h11 = cur.m2 - cur.m1 * cur.m1;
    const double w = -sqrt(2.0 * M * fmax(kl, 0.0));
    const double u = a * sqrt(M * (h22 * h11 - h21 * h21) / v11);
    const double phi = exp(-0.5 * w * w) / sqrt(2.0 * M_PI);
    return 0.5 * erfc(-w / M_SQRT2) + phi * (1.0 / w - 1.0 / u);
}

/* ---- upper tail: Pearson type IV -------------------------------------------------
 * The Pearson type IV law with the exact first four moments of SK
 * (G. M. Nita and D. E. Gary, PASP 122, 595, 2010, use this family for SK):
 * density proportional to (1 + z^2)^-(r/2 + 1) exp(-nu atan z),
 * z = (x - lambda) / a, with
 *     r = 6 (b2 - b1 - 1) / (2 b2 - 3 b1 - 6),  X = 16 (r - 1) - b1 (r - 2)^2,
 *     nu = -r (r - 2) sqrt(b1) / sqrt(X),  a = sqrt(mu2 X) / 4,
 *     lambda = 1 - (r - 2) sqrt(b1 mu2) / 4,
 * b1 = mu3^2 / mu2^3, b2 = mu4 / mu2^2; the law exists when X > 0 and
 * r > 2. With theta = atan z the density becomes cos(theta)^r
 * exp(-nu theta) on (-pi/2, pi/2), which is integrated directly. The ratio
 * r and b1 are taken from their exact rational forms (no cancellation). */

typedef struct pearson4 {
    double r, nu, a, lambda;
    double peak, lo, hi; /* mode in theta and the integration range */
    double top;          /* log density at the mode */
} pearson4;

static double p4_log(const pearson4 *q, double th)
{
    return q->r * log(cos(th)) - q->nu * th;
}

static int p4_make(uint32_t m, uint32_t n, pearson4 *q)
{
    if (m < 2u || n < 1u)
        return -1;
    const double M = (double)m, k = (double)n, K = M * k;
    const double M2 = M * M, M3 = M2 * M, M4 = M3 * M, k2 = k * k, k3 = k2 * k, k4 = k3 * k, k5 = k4 * k;
    const double pb = M4 * k5 + M4 * k4 + M3 * k5 + 73.0 * M3 * k4 + 126.0 * M3 * k3 - 96.0 * M2 * k4 +
                      362.0 * M2 * k3 + 1016.0 * M2 * k2 - 856.0 * M * k3 - 580.0 * M * k2 + 2040.0 * M * k -
                      1680.0 * k2 - 3120.0 * k + 288.0;
    const double pd = 5.0 * M4 * k5 + 11.0 * M4 * k4 - 13.0 * M3 * k5 - 7.0 * M3 * k4 + 54.0 * M3 * k3 -
                      84.0 * M2 * k4 - 296.0 * M2 * k3 - 164.0 * M2 * k2 + 4.0 * M * k3 - 494.0 * M * k2 -
                      780.0 * M * k + 420.0 * k2 + 600.0 * k - 288.0;
    if (!(pd > 0.0))
        return -1;
    const double r = (K + 1.0) * pb / (2.0 * pd);
    const double c = k * (M * k + 4.0 * M - 5.0) - 2.0;
    const double b1 = 8.0 * (K + 2.0) * (K + 3.0) / (k * (k + 1.0) * (M - 1.0)) * (c / ((K + 4.0) * (K + 5.0))) *
                      (c / ((K + 4.0) * (K + 5.0)));
    const double x = 16.0 * (r - 1.0) - b1 * (r - 2.0) * (r - 2.0);
    if (!(r > 2.0) || !(x > 0.0))
        return -1;
    const double mu2 = tl_sk_variance(m, n);
    q->r = r;
    q->nu = -r * (r - 2.0) * sqrt(b1) / sqrt(x);
    q->a = sqrt(mu2 * x) / 4.0;
    q->lambda = 1.0 - (r - 2.0) * sqrt(b1 * mu2) / 4.0;
    q->peak = atan(-q->nu / r);
    q->top = p4_log(q, q->peak);
    const double width = cos(q->peak) / sqrt(r), edge = 0.5 * M_PI;
    double lo = q->peak - width, hi = q->peak + width;
    for (int i = 0; i < 200 && lo > -edge && p4_log(q, lo) > q->top - CUT_DROP; i++)
        lo = q->peak - 2.0 * (q->peak - lo);
    for (int i = 0; i < 200 && hi < edge && p4_log(q, hi) > q->top - CUT_DROP; i++)
        hi = q->peak + 2.0 * (hi - q->peak);
    q->lo = fmax(lo, -edge);
    q->hi = fmin(hi, edge);
    return 0;
}

/* integral of exp(log density - top) over [from, to] within the range */
static double p4_mass(const pearson4 *q, const gl_rule *gl, double from, double to)
{
    from = fmax(from, q->lo);
    to = fmin(to, q->hi);
    if (!(to > from))
        return 0.0;
    const double half = 0.5 * (to - from) / GL_PANELS;
    double s = 0.0;
    for (int p = 0; p < GL_PANELS; p++) {
        const double mid = from + (2.0 * p + 1.0) * half;
        for (int i = 0; i < GL_NODES; i++)
            s += gl->w[i] * exp(p4_log(q, mid + half * gl->x[i]) - q->top);
    }
    return s * half;
}

double tl_sk_prob_above(uint32_t m, uint32_t n, double t)
{
    pearson4 q;
    if (isnan(t) || p4_make(m, n, &q) != 0)
        return NAN;
    gl_rule gl;
    gl_make(&gl);
    const double th = atan((t - q.lambda) / q.a);
    return p4_mass(&q, &gl, th, q.hi) / p4_mass(&q, &gl, q.lo, q.hi);
}

/* ---- thresholds -------------------------------------------------------------------- */

int tl_sk_thresholds(uint32_t m, uint32_t n, double false_alarm, double *lo, double *hi)
{
    if (m < 2u || n < 1u || !(false_alarm > 0.0 && false_alarm <= 0.5) || lo == NULL || hi == NULL)
        return -1;
    pearson4 q;
    if (p4_make(m, n, &q) != 0)
        return -1;
    const double p = 0.5 * false_alarm;
    gl_rule gl;
    gl_make(&gl);
    /* upper: bisect theta for tail mass p of the Pearson IV law */
    const double total = p4_mass(&q, &gl, q.lo, q.hi);
    double a = q.lo, b = q.hi;
    for (int i = 0; i < 200 && b - a > 1e-15; i++) {
        const double mid = 0.5 * (a + b);
        if (p4_mass(&q, &gl, mid, q.hi) / total > p)
            a = mid;
        else
            b = mid;
    }
    const double up = q.lambda + q.a * tan(0.5 * (a + b));
    /* lower: bisect t for P(SK < t) = p by the saddlepoint, between the
     * mean minus half a standard deviation and the first point below it
     * whose tail is under p (halving towards 0) */
    const double sd = sqrt(tl_sk_variance(m, n));
    double t_hi = 1.0 - 0.5 * sd, t_lo = t_hi;
    if (!(tl_sk_prob_below(m, n, t_hi) > p))
        return -1;
    for (int i = 0; i < 80; i++) {
        t_lo = t_lo > 2.0 * sd ? t_lo - 2.0 * sd : 0.5 * t_lo;
        const double v = tl_sk_prob_below(m, n, t_lo);
        if (isnan(v))
            return -1;
        if (v < p)
            break;
        t_hi = t_lo;
    }
    for (int i = 0; i < 200 && t_hi - t_lo > 1e-14 * t_hi; i++) {
        const double mid = 0.5 * (t_lo + t_hi);
        const double v = tl_sk_prob_below(m, n, mid);
        if (isnan(v))
            return -1;
        if (v < p)
            t_lo = mid;
        else
            t_hi = mid;
    }
    *lo = 0.5 * (t_lo + t_hi);
    *hi = up;
    return 0;
}

/* ---- three-moment comparison: Pearson type III ------------------------------------
 * Kept to show why it is not used (docs/spectral-kurtosis.md).
 * Regularized incomplete gamma ---------------------------------------------
 * Series P(a, x) = x^a e^-x / Gamma(a + 1) * sum_k x^k / ((a + 1)...(a + k))
 * for x < a + 1 (Abramowitz and Stegun 6.5.29), and the continued fraction
 * for Q(a, x) (A&S 6.5.31) evaluated by the modified Lentz method otherwise.
 * Both need O(sqrt(a)) terms near x = a; the caps below leave a wide margin. */

static unsigned term_cap(double a)
{
    return 1000u + (unsigned)(60.0 * sqrt(a));
}

/* log(x^a e^-x / Gamma(a)) */
static double log_front(double a, double x)
{
    return a * log(x) - x - lgamma(a);
}

static double series_p(double a, double x)
{
    double term = 1.0 / a, sum = term;
    const unsigned cap = term_cap(a);
    for (unsigned i = 1; i <= cap; i++) {
        term *= x / (a + (double)i);
        sum += term;
        if (term < sum * 1e-17)
            break;
    }
    return sum * exp(log_front(a, x));
}

static double fraction_q(double a, double x)
{
    const double tiny = 1e-300;
    double b = x + 1.0 - a, c = 1.0 / tiny, d = 1.0 / b, h = d;
    const unsigned cap = term_cap(a);
    for (unsigned i = 1; i <= cap; i++) {
        const double an = -(double)i * ((double)i - a);
        b += 2.0;
        d = an * d + b;
        if (fabs(d) < tiny)
            d = tiny;
        c = b + an / c;
        if (fabs(c) < tiny)
            c = tiny;
        d = 1.0 / d;
        const double step = d * c;
        h *= step;
        if (fabs(step - 1.0) < 1e-16)
            break;
    }
    return h * exp(log_front(a, x));
}

static double gamma_p(double a, double x)
{
    if (!(a > 0.0) || !(x >= 0.0) || isinf(a))
        return NAN;
    if (x == 0.0)
        return 0.0;
    if (isinf(x))
        return 1.0;
    return x < a + 1.0 ? series_p(a, x) : 1.0 - fraction_q(a, x);
}

static double gamma_q(double a, double x)
{
    if (!(a > 0.0) || !(x >= 0.0) || isinf(a))
        return NAN;
    if (x == 0.0)
        return 1.0;
    if (isinf(x))
        return 0.0;
    return x < a + 1.0 ? 1.0 - series_p(a, x) : fraction_q(a, x);
}

/* x with P(a, x) = p (upper = 0) or Q(a, x) = p (upper = 1), 0 < p <= 0.25,
 * by bisection: the tail probability is monotonic in x, so the bracket
 * [0, hi] always holds the root; halving from 0 reaches the smallest
 * positive doubles, so 1100 steps bound the loop. Returns -1 on no bracket. */
static double gamma_tail_point(double a, double p, int upper)
{
    double lo = 0.0, hi = a + 1.0;
    for (int i = 0; i < 1100; i++) { /* grow hi until the tail beyond it is below p */
        const double t = upper ? gamma_q(a, hi) : gamma_p(a, hi);
        if (upper ? t <= p : t >= p)
            break;
        lo = hi;
        hi *= 2.0;
        if (isinf(hi))
            return -1.0;
    }
    for (int i = 0; i < 1100 && hi - lo > 4e-16 * hi; i++) {
        const double mid = lo == 0.0 ? 0.5 * hi : 0.5 * (lo + hi);
        const double t = upper ? gamma_q(a, mid) : gamma_p(a, mid);
        if (upper ? t > p : t < p)
            lo = mid;
        else
            hi = mid;
    }
    return 0.5 * (lo + hi);
}

int tl_sk_thresholds_pearson3(uint32_t m, uint32_t n, double false_alarm, double *lo, double *hi)
{
    if (m < 2u || n < 1u || !(false_alarm > 0.0 && false_alarm <= 0.5) || lo == NULL || hi == NULL)
        return -1;
    const double mu2 = tl_sk_central_moment(m, n, 2), mu3 = tl_sk_central_moment(m, n, 3);
    if (!(mu2 > 0.0) || !(mu3 > 0.0))
        return -1;
    const double shape = 4.0 * mu2 * mu2 * mu2 / (mu3 * mu3);
    const double scale = mu3 / (2.0 * mu2);
    const double origin = 1.0 - 2.0 * mu2 * mu2 / mu3; /* 1 - shape x scale */
    const double p = 0.5 * false_alarm;
    const double x_lo = gamma_tail_point(shape, p, 0), x_hi = gamma_tail_point(shape, p, 1);
    if (x_lo < 0.0 || x_hi < 0.0)
        return -1;
    *lo = origin + scale * x_lo;
    *hi = origin + scale * x_hi;
    return 0;
}

void tl_sk_flag(const double *s1, const double *s2, uint32_t channels, uint32_t m, uint32_t n, double lo, double hi,
                double *sk_out, uint8_t *flag_out)
{
    for (uint32_t c = 0; c < channels; c++) {
        const double sk = tl_sk_estimate(s1[c], s2[c], m, n);
        if (sk_out != NULL)
            sk_out[c] = sk;
        flag_out[c] = isnan(sk) ? TL_SK_INVALID : sk < lo ? TL_SK_LOW : sk > hi ? TL_SK_HIGH : TL_SK_INSIDE;
    }
}

uint32_t tl_sk_mask_blocks(uint32_t blocks, double false_alarm)
{
    double tail = 1.0, term = pow(1.0 - false_alarm, (double)blocks); /* P(X = 0) */
    for (uint32_t k = 0; k < blocks; k++) {
        tail -= term; /* now P(X >= k + 1) */
        if (tail <= 1e-3)
            return k + 1u;
        term *= (double)(blocks - k) / (double)(k + 1u) * false_alarm / (1.0 - false_alarm);
    }
    return blocks;
}
