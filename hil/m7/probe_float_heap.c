/*
 * probe_float_heap.c - deliberately wrong code for the must-fail test of
 * hil/check_m7_image.sh: double arithmetic and a heap allocation. Built
 * twice: with the soft-float ABI (the check must name the soft-float
 * routines and malloc) and with the FPU (it must name the VFP
 * instructions). Never linked into an image.
 */
#include <stdlib.h>

double probe_scale(double x, int n);

double probe_scale(double x, int n)
{
    double *p = malloc(sizeof *p);
    if (p == NULL)
        return 0.0;
    *p = x * (double)n + 0.5;
    const double r = *p / 3.0;
    free(p);
    return r;
}
