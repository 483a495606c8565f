/*
 * Orderly enumeration of connected, vertex-coloured multigraphs with an exact
 * degree for every colour: the constitutional-isomer core of rank.generate.
 *
 * A vertex colour ("type") stands for an atom kind with a fixed hydrogen count,
 * so its degree (sum of bond orders to heavy atoms) is known in advance.
 *
 * Canonical form: the labelling that maximises the code
 *     for j = 0..n-1:  A[0][j], A[1][j], ..., A[j-1][j], value(type[j])
 * (column-wise upper triangle, colour last in each column).  The leading
 * principal submatrix of a maximal code is itself maximal (Read 1978,
 * Ann. Discrete Math. 2, 107; Faradzev 1978), so structures are grown one
 * vertex at a time and a prefix that is not maximal is cut with its whole
 * subtree.  With adjacency entries before the colour, a vertex joined to the
 * prefix always beats one that is not, so every prefix of a connected maximal
 * form is connected and each new vertex must bond to the prefix.
 *
 * The search is an explicit-stack depth-first traversal, so Python can pull
 * structures in batches and the stream stays lazy; memory is O(n^2).  With
 * parts > 1, the surviving nodes at level split_level are dealt out in turn and
 * only subtrees of this part are searched: the parts are disjoint, together
 * complete, and the same whatever process runs them.
 */
#define PY_SSIZE_T_CLEAN
#include <Python.h>
#include <string.h>

#define MAXN 40
#define MAXT 64
#define MAXG 8                          /* groups of types with a bound on vertices carrying a double bond */

/* Bond bans: bit BAN(o) of forbid[a][b] set means bond order o may not join a vertex of
 * type a to one of type b.  Python names these bits once, as rank.generate.core.BondBan,
 * whose values are the module constants BAN_DOUBLE and BAN_TRIPLE added in PyInit__enum. */
#define BAN(order) (1u << (order))
#define BAN_DOUBLE BAN(2)
#define BAN_TRIPLE BAN(3)

typedef struct {
    PyObject_HEAD
    int n, ntypes, maxorder;
    int tval[MAXT], tdeg[MAXT], tleft[MAXT];
    int tneed_double[MAXT];             /* 1: the atom must carry a double bond */
    int ngroups;                        /* bounds on how many vertices of a group carry a double bond */
    unsigned tgroups[MAXT];             /* bit g set: a vertex of the type counts for group g */
    int glo[MAXG], ghi[MAXG];           /* at least glo, at most ghi (-1: no upper bound) */
    unsigned char forbid[MAXT][MAXT];   /* BAN(o) set: bond order o not allowed */
    /* search state */
    int k;                      /* level being filled (vertex index) */
    int started;                /* level k holds a live candidate */
    int done;
    unsigned char A[MAXN][MAXN];
    int type[MAXN];
    int resid[MAXN];
    int doubles[MAXN];          /* double bonds on each placed vertex */
    int col[MAXN][MAXN];        /* current column candidate of each level */
    int ub[MAXN][MAXN];         /* upper bounds of that column's entries */
    int colsum[MAXN];
    int rem_deg;                /* degrees of the vertices not yet placed */
    int placed_deg;             /* degrees of the placed vertices */
    int excess;                 /* total bond order minus (n - 1) */
    int resid_sum;              /* free valence of the placed vertices */
    /* share of the work: subtrees below level split_level are dealt out in turn */
    int split_level, part, parts;
    unsigned long long split_count;
} Enumerator;

/* ---------- canonicity test ---------------------------------------------- */

static int perm[MAXN];
static unsigned char used[MAXN];

/* Is there a relabelling of vertices 0..m-1 whose code is larger? */
static int better_from(const Enumerator *e, int m, int j)
{
    if (j == m) return 0;
    for (int v = 0; v < m; v++) {
        if (used[v]) continue;
        int cmp = 0;
        for (int i = 0; i < j && cmp == 0; i++) {
            int a = e->A[perm[i]][v], b = e->A[i][j];
            cmp = (a > b) - (a < b);
        }
        if (cmp == 0) {
            int a = e->tval[e->type[v]], b = e->tval[e->type[j]];
            cmp = (a > b) - (a < b);
        }
        if (cmp > 0) return 1;
        if (cmp < 0) continue;
        used[v] = 1; perm[j] = v;
        int r = better_from(e, m, j + 1);
        used[v] = 0;
        if (r) return 1;
    }
    return 0;
}

static int is_canonical(const Enumerator *e, int m)
{
    memset(used, 0, sizeof(used));
    return !better_from(e, m, 0);
}

/* ---------- alternating cycles (possible second Kekule form) ------------ */

static unsigned char seen[MAXN];

static int alt_path(const Enumerator *e, int z, int need, int u, int v, int len)
{
    if (need == 1 && len >= 3 && e->A[z][u] == 1) return 1;
    for (int w = 0; w < e->n; w++) {
        if (seen[w] || e->A[z][w] != need) continue;
        seen[w] = 1;
        int r = alt_path(e, w, 3 - need, u, v, len + 1);
        seen[w] = 0;
        if (r) return 1;
    }
    return 0;
}

static int has_alternating_cycle(const Enumerator *e)
{
    for (int u = 0; u < e->n; u++)
        for (int v = u + 1; v < e->n; v++) {
            if (e->A[u][v] != 2) continue;
            memset(seen, 0, sizeof(seen));
            seen[u] = seen[v] = 1;
            if (alt_path(e, v, 1, u, v, 1)) return 1;
        }
    return 0;
}

/* ---------- one level of the search -------------------------------------- */

static void place(Enumerator *e, int k, int t)
{
    int s = 0, d = 0;
    for (int i = 0; i < k; i++) {
        int c = e->col[k][i];
        e->A[i][k] = e->A[k][i] = (unsigned char)c;
        e->resid[i] -= c;
        s += c;
        if (c == 2) { e->doubles[i]++; d++; }
    }
    e->doubles[k] = d;
    e->type[k] = t;
    e->colsum[k] = s;
    e->resid[k] = e->tdeg[t] - s;
    e->tleft[t]--;
    e->rem_deg -= e->tdeg[t];
    e->placed_deg += e->tdeg[t];
    e->resid_sum += e->tdeg[t] - 2 * s;
}

static void unplace(Enumerator *e, int k)
{
    int t = e->type[k];
    for (int i = 0; i < k; i++) {
        e->resid[i] += e->col[k][i];
        if (e->col[k][i] == 2) e->doubles[i]--;
        e->A[i][k] = e->A[k][i] = 0;
    }
    e->tleft[t]++;
    e->rem_deg += e->tdeg[t];
    e->placed_deg -= e->tdeg[t];
    e->resid_sum -= e->tdeg[t] - 2 * e->colsum[k];
}

/* Group bounds on vertices that carry a double bond: a placed vertex keeps its double
 * bonds, so the count of those that have one only grows (upper bound); a placed vertex
 * without one can still get one only with 2 free valences, an unplaced one only with a
 * degree of 2 or more (lower bound).  At a complete structure the count is exact. */
static int double_groups_feasible(const Enumerator *e, int k)
{
    for (int g = 0; g < e->ngroups; g++) {
        unsigned bit = 1u << g;
        int have = 0, can = 0;
        for (int i = 0; i <= k; i++) {
            if (!(e->tgroups[e->type[i]] & bit)) continue;
            if (e->doubles[i]) have++;
            else if (e->resid[i] >= 2) can++;
        }
        if (e->ghi[g] >= 0 && have > e->ghi[g]) return 0;
        for (int t = 0; t < e->ntypes; t++)
            if ((e->tgroups[t] & bit) && e->tdeg[t] >= 2) can += e->tleft[t];
        if (have + can < e->glo[g]) return 0;
    }
    return 1;
}

/* Necessary conditions on a prefix, cheaper than the full canonicity test.
 * In a maximal code, column k is the largest column any remaining vertex could
 * show at position k, so (1) column k, read over rows 0..k-2 and then its
 * colour, is not above column k-1; hence (2) the first bonded row ("parent")
 * never decreases, and no later vertex can bond to a row before parent(k):
 * those rows must already be saturated.  (3) The prefix, connected, cannot use
 * more bond order beyond a spanning tree than the whole structure has. */
static int feasible(const Enumerator *e, int k)
{
    int left = e->n - 1 - k, R = e->resid_sum, D = e->rem_deg;
    if (e->resid[k] < 0) return 0;
    if (k >= 2) {
        int cmp = 0;
        for (int i = 0; i < k - 1 && cmp == 0; i++)
            cmp = (e->A[i][k] > e->A[i][k - 1]) - (e->A[i][k] < e->A[i][k - 1]);
        if (cmp == 0) {
            int a = e->tval[e->type[k]], b = e->tval[e->type[k - 1]];
            cmp = (a > b) - (a < b);
        }
        if (cmp > 0) return 0;
    }
    if (k >= 1) {
        int parent = 0;
        while (e->A[parent][k] == 0) parent++;
        for (int i = 0; i < parent; i++)
            if (e->resid[i]) return 0;
    }
    for (int i = 0; i <= k; i++)
        if (e->tneed_double[e->type[i]] && !e->doubles[i] && e->resid[i] < 2) return 0;
    if (e->ngroups && !double_groups_feasible(e, k)) return 0;
    if (left == 0) return R == 0;
    if (R < 1 || R > D || ((D - R) & 1)) return 0;
    if (e->placed_deg + e->resid_sum > 0 &&
        (e->placed_deg - R) / 2 - k > e->excess) return 0;
    for (int i = 0; i <= k; i++)
        if (e->resid[i] > e->maxorder * left) return 0;
    return 1;
}

static int allowed(const Enumerator *e, int ti, int t, int c)
{
    return c == 0 || !(e->forbid[ti][t] & BAN(c));
}

/* Set up the first column of type t at level k; 0 if none exists. */
static int first_column(Enumerator *e, int k, int t)
{
    int total = 0;
    for (int i = 0; i < k; i++) {
        int u = e->resid[i] < e->maxorder ? e->resid[i] : e->maxorder;
        if (u > e->tdeg[t]) u = e->tdeg[t];
        e->ub[k][i] = u;
        e->col[k][i] = 0;
        total += u;
    }
    if (k > 0 && total == 0) return 0;
    return 1;
}

/* Advance the column odometer of level k; 0 when exhausted. */
static int next_column(Enumerator *e, int k, int t)
{
    for (;;) {
        int i = k - 1;
        while (i >= 0) {
            if (e->col[k][i] < e->ub[k][i]) { e->col[k][i]++; break; }
            e->col[k][i] = 0;
            i--;
        }
        if (i < 0) return 0;
        int s = 0, ok = 1;
        for (int j = 0; j < k; j++) {
            s += e->col[k][j];
            if (!allowed(e, e->type[j], t, e->col[k][j])) ok = 0;
        }
        if (ok && s >= 1 && s <= e->tdeg[t]) return 1;
    }
}

/* Move level k to its next candidate (type, column); 0 when exhausted.
 * col[k][MAXN-1] is not used by columns (k < MAXN-1), so the current type
 * index of the level is kept in ub[k][MAXN-1]. */
static int next_candidate(Enumerator *e, int k, int fresh)
{
    int t;
    if (fresh) {
        t = 0;
        goto try_type;
    }
    t = e->ub[k][MAXN - 1];
    if (k > 0 && next_column(e, k, t)) return 1;
    t++;
try_type:
    for (; t < e->ntypes; t++) {
        if (e->tleft[t] == 0) continue;
        if (k == 0) {
            int best = 1;
            for (int u = 0; u < e->ntypes; u++)
                if (e->tleft[u] && e->tval[u] > e->tval[t]) best = 0;
            if (!best) continue;
            e->ub[k][MAXN - 1] = t;
            return 1;
        }
        if (!first_column(e, k, t)) continue;
        e->ub[k][MAXN - 1] = t;
        if (next_column(e, k, t)) return 1;
    }
    return 0;
}

/* Run until one structure is complete (returns 1) or the space is done (0). */
static int step(Enumerator *e)
{
    while (!e->done) {
        int k = e->k;
        int fresh = !e->started;
        if (e->started) unplace(e, k);
        if (!next_candidate(e, k, fresh)) {
            e->started = 0;
            if (k == 0) { e->done = 1; return 0; }
            e->k = k - 1;
            e->started = 1;
            continue;
        }
        e->started = 1;
        place(e, k, e->ub[k][MAXN - 1]);
        if (!feasible(e, k) || !is_canonical(e, k + 1)) continue;
        if (e->parts > 1 && k == (e->split_level < e->n - 1 ? e->split_level : e->n - 1)) {
            if (e->split_count++ % (unsigned long long)e->parts != (unsigned long long)e->part) continue;
        }
        if (k == e->n - 1) return 1;
        e->k = k + 1;
        e->started = 0;
    }
    return 0;
}

/* ---------- Python object ------------------------------------------------- */

static int Enumerator_init(Enumerator *e, PyObject *args, PyObject *kw)
{
    PyObject *vals, *degs, *counts;
    Py_buffer forbid;
    PyObject *need = NULL, *groups = NULL;
    int maxorder = 3, split_level = 3, part = 0, parts = 1;
    static char *names[] = {"values", "degrees", "counts", "forbid", "maxorder",
                            "split_level", "part", "parts", "needs_double", "double_groups", NULL};
    if (!PyArg_ParseTupleAndKeywords(args, kw, "OOOy*|iiiiOO", names, &vals, &degs, &counts,
                                     &forbid, &maxorder, &split_level, &part, &parts, &need, &groups))
        return -1;
    if (parts < 1 || part < 0 || part >= parts || split_level < 0) {
        PyErr_SetString(PyExc_ValueError, "need 0 <= part < parts and split_level >= 0");
        return -1;
    }
    Py_ssize_t T = PySequence_Size(vals);
    if (T <= 0 || T > MAXT || PySequence_Size(degs) != T || PySequence_Size(counts) != T
        || forbid.len != T * T) {
        PyBuffer_Release(&forbid);
        PyErr_SetString(PyExc_ValueError, "inconsistent type tables");
        return -1;
    }
    memset(((char *)e) + sizeof(PyObject), 0, sizeof(Enumerator) - sizeof(PyObject));
    e->ntypes = (int)T;
    e->maxorder = maxorder;
    int n = 0;
    for (Py_ssize_t t = 0; t < T; t++) {
        PyObject *a = PySequence_GetItem(vals, t), *b = PySequence_GetItem(degs, t),
                 *c = PySequence_GetItem(counts, t);
        e->tval[t] = (int)PyLong_AsLong(a);
        e->tdeg[t] = (int)PyLong_AsLong(b);
        e->tleft[t] = (int)PyLong_AsLong(c);
        Py_XDECREF(a); Py_XDECREF(b); Py_XDECREF(c);
        if (need && need != Py_None) {
            PyObject *f = PySequence_GetItem(need, t);
            e->tneed_double[t] = f ? PyObject_IsTrue(f) : 0;
            Py_XDECREF(f);
        }
        n += e->tleft[t];
        e->rem_deg += e->tdeg[t] * e->tleft[t];
    }
    for (Py_ssize_t i = 0; i < T; i++)
        for (Py_ssize_t j = 0; j < T; j++)
            e->forbid[i][j] = ((unsigned char *)forbid.buf)[i * T + j];
    PyBuffer_Release(&forbid);
    if (PyErr_Occurred()) return -1;
    /* double_groups: [(members, low, high), ...], members a sequence of type indices, high -1: none */
    if (groups && groups != Py_None) {
        Py_ssize_t G = PySequence_Size(groups);
        if (G < 0 || G > MAXG) {
            PyErr_SetString(PyExc_ValueError, "at most 8 double-bond groups");
            return -1;
        }
        for (Py_ssize_t g = 0; g < G; g++) {
            PyObject *item = PySequence_GetItem(groups, g);
            PyObject *members = NULL;
            int lo = 0, hi = -1;
            if (!item || !PyArg_ParseTuple(item, "Oii", &members, &lo, &hi)) { Py_XDECREF(item); return -1; }
            Py_ssize_t M = PySequence_Size(members);
            for (Py_ssize_t m = 0; m < M; m++) {
                PyObject *x = PySequence_GetItem(members, m);
                long t = x ? PyLong_AsLong(x) : -1;
                Py_XDECREF(x);
                if (t < 0 || t >= T) {
                    Py_DECREF(item);
                    if (!PyErr_Occurred()) PyErr_SetString(PyExc_ValueError, "group member out of range");
                    return -1;
                }
                e->tgroups[t] |= 1u << g;
            }
            Py_DECREF(item);
            e->glo[g] = lo;
            e->ghi[g] = hi;
        }
        e->ngroups = (int)G;
    }
    if (n < 1 || n > MAXN) {
        PyErr_SetString(PyExc_ValueError, "vertex count out of range");
        return -1;
    }
    e->n = n;
    e->split_level = split_level;
    e->part = part;
    e->parts = parts;
    e->excess = e->rem_deg / 2 - (n - 1);
    return 0;
}

/* next_batch(limit, flagged_only) -> (skipped, [record, ...])
 * A record is bytes: n type indices, then the upper triangle row by row,
 * then one byte that is 1 when the structure has an alternating cycle.
 * With flagged_only, structures without one are only counted in skipped. */
static PyObject *Enumerator_next_batch(Enumerator *e, PyObject *args)
{
    Py_ssize_t limit;
    int flagged_only = 0;
    if (!PyArg_ParseTuple(args, "n|p", &limit, &flagged_only)) return NULL;
    PyObject *out = PyList_New(0);
    if (!out) return NULL;
    long long skipped = 0;
    int n = e->n;
    Py_ssize_t size = n + n * (n - 1) / 2 + 1;
    unsigned char rec[MAXN + MAXN * MAXN / 2 + 1];
    while (PyList_GET_SIZE(out) < limit && skipped < 4 * limit) {
        int got;
        if (n == 1) {
            got = !e->done && e->part == 0;
            if (got) e->type[0] = 0;
            e->done = 1;
        } else {
            got = step(e);
        }
        if (!got) break;
        int flag = has_alternating_cycle(e);
        if (flagged_only && !flag) { skipped++; continue; }
        Py_ssize_t p = 0;
        for (int i = 0; i < n; i++) rec[p++] = (unsigned char)e->type[i];
        for (int i = 0; i < n; i++)
            for (int j = i + 1; j < n; j++) rec[p++] = e->A[i][j];
        rec[p++] = (unsigned char)flag;
        PyObject *b = PyBytes_FromStringAndSize((const char *)rec, size);
        if (!b || PyList_Append(out, b) < 0) { Py_XDECREF(b); Py_DECREF(out); return NULL; }
        Py_DECREF(b);
    }
    return Py_BuildValue("LN", skipped, out);
}


/* estimate(probes, seed) -> float
 * Knuth's random-probe estimate of the number of complete structures
 * (D. E. Knuth, Math. Comp. 1975, 29, 121, doi:10.1090/S0025-5718-1975-0373371-6):
 * walk from the root to a leaf choosing a random child, multiply the numbers
 * of children met; the mean of the products is unbiased. */
static unsigned long long rng_state;
static unsigned rnd(void)
{
    rng_state = rng_state * 6364136223846793005ULL + 1442695040888963407ULL;
    return (unsigned)(rng_state >> 33);
}

static PyObject *Enumerator_estimate(Enumerator *e, PyObject *args)
{
    int probes;
    unsigned long long seed;
    if (!PyArg_ParseTuple(args, "iK", &probes, &seed)) return NULL;
    if (e->started || e->k || e->done || probes < 1) {
        PyErr_SetString(PyExc_ValueError, "estimate needs a fresh enumerator");
        return NULL;
    }
    if (e->n == 1) return PyFloat_FromDouble(1.0);
    rng_state = seed * 2654435761ULL + 1;
    double total = 0.0;
    int pick_col[MAXN];
    for (int p = 0; p < probes; p++) {
        double w = 1.0;
        int k = 0;
        for (;;) {
            int count = 0, pick_t = -1, fresh = 1;
            while (next_candidate(e, k, fresh)) {
                fresh = 0;
                int t = e->ub[k][MAXN - 1];
                place(e, k, t);
                if (feasible(e, k) && is_canonical(e, k + 1)) {
                    count++;
                    if (rnd() % (unsigned)count == 0) {
                        pick_t = t;
                        for (int i = 0; i < k; i++) pick_col[i] = e->col[k][i];
                    }
                }
                unplace(e, k);
            }
            if (count == 0) { w = 0.0; break; }
            w *= count;
            if (k == e->n - 1) break;
            for (int i = 0; i < k; i++) e->col[k][i] = pick_col[i];
            place(e, k, pick_t);
            k++;
        }
        for (int j = k - 1; j >= 0; j--) unplace(e, j);
        total += w;
    }
    return PyFloat_FromDouble(total / probes);
}

static PyMethodDef Enumerator_methods[] = {
    {"next_batch", (PyCFunction)Enumerator_next_batch, METH_VARARGS,
     "next_batch(limit, flagged_only=False) -> (skipped, records)"},
    {"estimate", (PyCFunction)Enumerator_estimate, METH_VARARGS,
     "estimate(probes, seed) -> expected number of structures (Knuth 1975)"},
    {NULL}
};

static PyTypeObject EnumeratorType = {
    PyVarObject_HEAD_INIT(NULL, 0)
    .tp_name = "rank._enum.Enumerator",
    .tp_basicsize = sizeof(Enumerator),
    .tp_flags = Py_TPFLAGS_DEFAULT,
    .tp_doc = "Orderly enumerator of connected coloured multigraphs with exact degrees.",
    .tp_new = PyType_GenericNew,
    .tp_init = (initproc)Enumerator_init,
    .tp_methods = Enumerator_methods,
};

static struct PyModuleDef module = {PyModuleDef_HEAD_INIT, "_enum", NULL, -1, NULL};

PyMODINIT_FUNC PyInit__enum(void)
{
    if (PyType_Ready(&EnumeratorType) < 0) return NULL;
    PyObject *m = PyModule_Create(&module);
    if (!m) return NULL;
    Py_INCREF(&EnumeratorType);
    if (PyModule_AddObject(m, "Enumerator", (PyObject *)&EnumeratorType) < 0) {
        Py_DECREF(&EnumeratorType);
        Py_DECREF(m);
        return NULL;
    }
    if (PyModule_AddIntConstant(m, "BAN_DOUBLE", BAN_DOUBLE) < 0
        || PyModule_AddIntConstant(m, "BAN_TRIPLE", BAN_TRIPLE) < 0) {
        Py_DECREF(m);
        return NULL;
    }
    return m;
}
