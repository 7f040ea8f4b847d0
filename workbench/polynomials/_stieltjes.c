/*
 * The Stieltjes loop of workbench/polynomials/recurrence.py as one pass over the nodes per step.
 *
 * Why: the numpy form makes about ten array passes per step, each a separate numpy call; once
 * the nodes no longer fit in the core's cache every pass streams the arrays from memory, so the
 * cost is the number of passes, not the arithmetic.  Here each step is one pass that updates the
 * mantissas of every node and accumulates the sums of the next step (see stieltjes_kernel.py for
 * the formulas and for why the numbers are those of the numpy form).
 *
 * State per node (arrays of the caller, updated in place):
 *   u  mantissa of a_k r_k (the numpy form's m_cur before it is divided by a_k),
 *   p  mantissa of a_{k-1} r_{k-1} (undivided as well: the numpy form's m_prev is p * (1/a_{k-1})),
 *   e  binary exponent, s = 2^(2e) (0 below 2^-1074), x the node.
 * One step, node by node, with the numpy form's operations in the numpy form's order:
 *   c = u * (1/a_k);  v = (x - b_k) * c - (p * (1/a_{k-1})) * a_k;  w = v * v * s,
 * v is written over p, and the roles of u and p swap.  Only the two sums (of w and of w x) are
 * reassociated: over blocks of BLOCK nodes in vector lanes, then block by block in order.
 * Compile without floating-point contraction (setup.py passes -ffp-contract=off) so that no
 * multiply-add is fused: the mantissas are then the numpy form's numbers bit for bit.
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <math.h>
#include <stdint.h>
#include <string.h>

#define BLOCK 2048
/* how many steps between looks at the stop flag and at pending signals (Ctrl-C) */
#define POLL_EVERY 64

#if defined(__GNUC__) && defined(__x86_64__) && defined(__linux__) && !defined(__clang__)
/* AVX-512 and AVX2 copies next to the baseline one, chosen at load time by the CPU's features
 * (GCC function multi-versioning): portable binaries, no -march=native */
#define VECTOR_CLONES __attribute__((target_clones("avx512f", "avx2", "default")))
#else
#define VECTOR_CLONES
#endif

/* Independent partial sums per block: LANES accumulators for each of the two sums, so that
 * the additions of consecutive nodes do not wait for each other (a single vector accumulator
 * makes the loop wait on the adder's latency, ~4 cycles, every 4 or 8 nodes).  Node i of a
 * block adds into accumulator i % LANES; the LANES partial sums are then added pairwise. */
#define LANES 32

static double pairwise(double *v, int n)
{
    for (int width = n / 2; width >= 1; width /= 2)
        for (int j = 0; j < width; j++)
            v[j] += v[j + width];
    return v[0];
}

VECTOR_CLONES
static void block_step(const double *restrict x, const double *restrict u, double *restrict p,
                       const double *restrict s, Py_ssize_t n, double b_k, double a_k, double inverse,
                       double inverse_prev, double *sum_w, double *sum_wx)
{
    double sw[LANES] = {0.0}, swx[LANES] = {0.0};
    Py_ssize_t i = 0;
    for (; i + LANES <= n; i += LANES) {
#pragma omp simd
        for (int j = 0; j < LANES; j++) {
            double c = u[i + j] * inverse;
            double v = (x[i + j] - b_k) * c - (p[i + j] * inverse_prev) * a_k;
            double w = v * v * s[i + j];
            p[i + j] = v;
            sw[j] += w;
            swx[j] += w * x[i + j];
        }
    }
    for (int j = 0; i < n; i++, j++) {
        double c = u[i] * inverse;
        double v = (x[i] - b_k) * c - (p[i] * inverse_prev) * a_k;
        double w = v * v * s[i];
        p[i] = v;
        sw[j] += w;
        swx[j] += w * x[i];
    }
    *sum_w = pairwise(sw, LANES);
    *sum_wx = pairwise(swx, LANES);
}

VECTOR_CLONES
static void block_sums(const double *restrict x, const double *restrict u, const double *restrict s,
                       Py_ssize_t n, double *sum_w, double *sum_wx)
{
    double sw[LANES] = {0.0}, swx[LANES] = {0.0};
    Py_ssize_t i = 0;
    for (; i + LANES <= n; i += LANES) {
#pragma omp simd
        for (int j = 0; j < LANES; j++) {
            double w = u[i + j] * u[i + j] * s[i + j];
            sw[j] += w;
            swx[j] += w * x[i + j];
        }
    }
    for (int j = 0; i < n; i++, j++) {
        double w = u[i] * u[i] * s[i];
        sw[j] += w;
        swx[j] += w * x[i];
    }
    *sum_w = pairwise(sw, LANES);
    *sum_wx = pairwise(swx, LANES);
}

/* Move the growth of large mantissas into the exponents (exact: powers of two), as the numpy
 * form's _renormalise does with m_cur = u and m_prev = p * inverse_prev. */
static void renormalise(double *u, double *p, int64_t *e, double *s, Py_ssize_t size, double inverse_prev, double big)
{
    for (Py_ssize_t i = 0; i < size; i++) {
        double cur = fabs(u[i]);
        if (cur > big) {
            double prev = fabs(p[i] * inverse_prev);
            int shift;
            frexp(cur > prev ? cur : prev, &shift);
            u[i] = ldexp(u[i], -shift);
            p[i] = ldexp(p[i], -shift);
            e[i] += shift;
            int64_t twice = 2 * e[i];
            if (twice < -2000) twice = -2000;
            if (twice > 2000) twice = 2000;
            s[i] = ldexp(1.0, (int)twice);
        }
    }
}

static void sums(const double *x, const double *u, const double *s, Py_ssize_t size, double *sw, double *swx)
{
    *sw = 0.0;
    *swx = 0.0;
    for (Py_ssize_t lo = 0; lo < size; lo += BLOCK) {
        Py_ssize_t n = size - lo < BLOCK ? size - lo : BLOCK;
        double dw, dwx;
        block_sums(x + lo, u + lo, s + lo, n, &dw, &dwx);
        *sw += dw;
        *swx += dwx;
    }
}

/* status: -1 done, k >= 0 b_k not finite, -2 stopped by the flag, -3 a signal is pending */
static Py_ssize_t loop(const double *x, double *u, double *p, int64_t *e, double *s, double *a, double *b,
                       Py_ssize_t size, Py_ssize_t count, long every, double big, volatile int32_t *stop,
                       PyThreadState **state)
{
    double sw, swx, inverse_prev = 1.0;
    sums(x, u, s, size, &sw, &swx);
    for (Py_ssize_t k = 0; k <= count; k++) {
        double a_k = 0.0, inverse = 1.0;
        if (k > 0) {
            a_k = sqrt(sw);
            a[k] = a_k;
            inverse = 1.0 / a_k;
        }
        double b_k = swx / sw;
        b[k] = b_k;
        if (!isfinite(b_k))
            return k;
        if (k == count)
            break;
        sw = 0.0;
        swx = 0.0;
        for (Py_ssize_t lo = 0; lo < size; lo += BLOCK) {
            Py_ssize_t n = size - lo < BLOCK ? size - lo : BLOCK;
            double dw, dwx;
            block_step(x + lo, u + lo, p + lo, s + lo, n, b_k, a_k, inverse, inverse_prev, &dw, &dwx);
            sw += dw;
            swx += dwx;
        }
        double *swap = u;
        u = p;
        p = swap;
        inverse_prev = inverse;
        if ((k + 1) % every == 0)
            renormalise(u, p, e, s, size, inverse_prev, big);
        if ((k + 1) % POLL_EVERY == 0) {
            if (*stop)
                return -2;
            PyEval_RestoreThread(*state);
            int pending = PyErr_CheckSignals();  /* only the main thread sees signals */
            *state = PyEval_SaveThread();
            if (pending)
                return -3;
        }
    }
    return -1;
}

/* the buffer of an array of the given kind: 'd' float64, 'q' int64, 'i' int32 (C order) */
static int get(PyObject *object, Py_buffer *view, int writable, char kind, const char *name)
{
    int flags = PyBUF_C_CONTIGUOUS | PyBUF_FORMAT | (writable ? PyBUF_WRITABLE : 0);
    if (PyObject_GetBuffer(object, view, flags) < 0)
        return -1;
    const char *format = view->format ? view->format : "B";
    if (*format == '<' || *format == '=' || *format == '@')
        format++;
    char code = *format;
    int ok = format[0] != '\0' && format[1] == '\0';
    if (kind == 'd')
        ok = ok && code == 'd' && view->itemsize == 8;
    else if (kind == 'q')
        ok = ok && (code == 'q' || code == 'l') && view->itemsize == 8;
    else
        ok = ok && (code == 'i' || (code == 'l' && view->itemsize == 4)) && view->itemsize == 4;
    if (!ok) {
        PyErr_Format(PyExc_TypeError, "%s must be a contiguous %s array", name,
                     kind == 'd' ? "float64" : kind == 'q' ? "int64" : "int32");
        PyBuffer_Release(view);
        return -1;
    }
    return 0;
}

static PyObject *run(PyObject *self, PyObject *args)
{
    PyObject *objects[8];
    long every;
    double big;
    static const char *names[8] = {"x", "u", "p", "exponent", "scale", "a", "b", "stop"};
    if (!PyArg_ParseTuple(args, "OOOOOOOOld", &objects[0], &objects[1], &objects[2], &objects[3], &objects[4],
                          &objects[5], &objects[6], &objects[7], &every, &big))
        return NULL;
    Py_buffer views[8];
    int got = 0;
    PyObject *result = NULL;
    static const char kinds[8] = {'d', 'd', 'd', 'q', 'd', 'd', 'd', 'i'};
    for (; got < 8; got++)
        if (get(objects[got], &views[got], got != 0, kinds[got], names[got]) < 0)
            goto done;
    Py_ssize_t size = views[0].len / 8;
    Py_ssize_t count = views[5].len / 8 - 1;
    if (views[1].len != views[0].len || views[2].len != views[0].len || views[3].len != views[0].len ||
        views[4].len != views[0].len || views[6].len != views[5].len || views[7].len < 4 || count < 0 ||
        size < 1 || every < 1) {
        PyErr_SetString(PyExc_ValueError, "inconsistent array sizes for the Stieltjes loop");
        goto done;
    }
    PyThreadState *state = PyEval_SaveThread();
    Py_ssize_t status = loop((const double *)views[0].buf, (double *)views[1].buf, (double *)views[2].buf,
                             (int64_t *)views[3].buf, (double *)views[4].buf, (double *)views[5].buf,
                             (double *)views[6].buf, size, count, every, big, (volatile int32_t *)views[7].buf,
                             &state);
    PyEval_RestoreThread(state);
    if (status == -3)
        goto done;  /* the pending signal's exception (KeyboardInterrupt) is set */
    result = PyLong_FromSsize_t(status);
done:
    for (int i = 0; i < got; i++)
        PyBuffer_Release(&views[i]);
    return result;
}

static PyMethodDef methods[] = {
    {"run", run, METH_VARARGS,
     "run(x, u, p, exponent, scale, a, b, stop, every, big) -> status\n\n"
     "The Stieltjes loop in place (see workbench.polynomials.stieltjes_kernel).  Returns -1 when done,\n"
     "k >= 0 when b_k is not finite, -2 when stop[0] was set by another thread.  Releases the GIL."},
    {NULL, NULL, 0, NULL},
};

static struct PyModuleDef module = {PyModuleDef_HEAD_INIT, "_stieltjes", NULL, -1, methods};

PyMODINIT_FUNC PyInit__stieltjes(void) { return PyModule_Create(&module); }
