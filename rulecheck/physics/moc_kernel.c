/* Step loop of the method-of-characteristics solver, in C.
 *
 * The same update as the numpy step loop of rulecheck/physics/transient.py (_run) and
 * its helpers in transient_boundary.py and transient_grid.py, operation for operation
 * and in the same order, over the same stacked arrays: interior characteristics, node
 * heads from S_C / S_B, fixed heads, valve orifices, gas arresters (Newton on the gas
 * volume), vapour cavities (DVCM) at nodes and sections, pipe ends, envelopes and
 * histories. The physics and its sources are documented there; this file only repeats
 * it without Python's per-call cost. rulecheck/physics/moc_compiled.py compiles it with
 * the system C compiler at first use and passes the arrays; where no compiler is found
 * the numpy loop runs instead. Keep the two in step: tests/test_moc_compiled.py runs
 * both on the same networks and compares every result.
 *
 * Arguments: p[] holds the arrays (slot order: enum below, mirrored by POINTERS in
 * moc_compiled.py), iv[] the sizes and in/out event counts, dv[] the constants. Every
 * array is C-contiguous float64, int64 or (on_stop) uint8.
 */
#include <math.h>
#include <stdint.h>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif

enum {
    P_H, P_Q, P_C, P_B2, P_R2, P_INV2B,
    P_END_CIDX, P_END_QIDX, P_END_SEC, P_END_NODE, P_END_INVB, P_END_SINVB, P_NODE_INVSB,
    P_CEND, P_SC, P_HN,
    P_FIXED_IDX, P_FIXED_VAL, P_CV_T,
    P_BARE_IDX, P_BARE_NODE, P_BARE_SB, P_BARE_ZV,
    P_V_NODES, P_ZV,
    P_A_NODE, P_A_VALVE, P_A_Z, P_A_K, P_A_N, P_A_VMAX, P_A_DT, P_A_RHOG, P_A_PATM,
    P_A_SB, P_A_ZV, P_A_HV, P_A_VOL, P_A_PREV, P_A_FLOW, P_A_STOP, P_A_PRE,
    P_HMAX, P_HMIN, P_NET_SEC, P_NET_PIPE, P_NET_NODE, P_NET_END, P_A_NET, P_RUNS, P_VALVE_H, P_VALVE_Q, P_GAS,
    P_NODE_SB, P_SEC_INVB,
    P_CAV, /* then CAV_SLOTS for the node places, CAV_SLOTS for the section places */
};
enum { CV_HV, CV_ONSET, CV_VOL, CV_NET, CV_LARGEST, CV_DT, CV_END, CV_OPEN, CV_EVENTS, CAV_SLOTS };
#define N_POINTERS (P_CAV + 2 * CAV_SLOTS)

enum {
    I_N, I_NODES, I_ENDS, I_NETS, I_FIXED, I_BARE, I_ARR, I_TURNS,
    I_EV0, I_CAP0, I_EV1, I_CAP1, /* events recorded and capacity: nodes, sections */
    N_INTS
};
enum { D_WEIGHT, D_NEWTON_TOL, D_ONSET_TOL, D_ORIFICE_FLOOR, D_SERIES_STEP, N_DOUBLES };

typedef struct {
    int64_t size;
    double *hv, *onset, *vol, *net, *largest;
    const double *dt;
    const int64_t *end;
    int64_t *open;   /* event open at each place, or -1 */
    int64_t *events; /* (place, step formed, step collapsed or -1) per event */
    int64_t *n_ev;
} Places;

/* the layout, so that the loader can refuse a stale build */
int64_t moc_slots(int64_t *counts) {
    counts[0] = N_POINTERS;
    counts[1] = N_INTS;
    counts[2] = N_DOUBLES;
    return 3;
}

/* valve_heads: orifice to atmosphere at a node; *q may be NULL */
static double valve_head(double sc, double sb, double cv, double z, double *q) {
    double liquid = sc / sb;
    double d = liquid - z;
    int flowing = (cv > 0.0) && (d > 0.0);
    if (!flowing) d = 0.0;
    double c = cv / sb;
    double y = 2.0 * d / (flowing ? c + sqrt(c * c + 4.0 * d) : 1.0);
    if (q) *q = cv * y;
    return flowing ? z + y * y : liquid;
}

/* CavityPlaces.advance for one place; returns whether it holds a cavity now */
static int advance(Places *P, int64_t c, double net, int64_t k, double weight) {
    double old = P->vol[c];
    double vol = old + P->dt[c] * (weight * net + (1.0 - weight) * P->net[c]);
    int keep = vol > 0.0;
    P->vol[c] = keep ? vol : 0.0;
    P->net[c] = keep ? net : 0.0;
    int recorded = P->end[c] >= k;
    if (keep && recorded) {
        if (vol > P->largest[c]) P->largest[c] = vol;
        if (old <= 0.0) {
            int64_t e = *P->n_ev;
            P->open[c] = e;
            P->events[3 * e] = c;
            P->events[3 * e + 1] = k;
            P->events[3 * e + 2] = -1;
            *P->n_ev = e + 1;
        }
    } else if (old > 0.0 && !keep && recorded && P->open[c] >= 0) {
        P->events[3 * P->open[c] + 2] = k;
        P->open[c] = -1;
    }
    return keep;
}

static Places places(void **p, int64_t first, int64_t size, int64_t *n_ev) {
    Places P;
    P.size = size;
    P.hv = p[first + CV_HV];
    P.onset = p[first + CV_ONSET];
    P.vol = p[first + CV_VOL];
    P.net = p[first + CV_NET];
    P.largest = p[first + CV_LARGEST];
    P.dt = p[first + CV_DT];
    P.end = p[first + CV_END];
    P.open = p[first + CV_OPEN];
    P.events = p[first + CV_EVENTS];
    P.n_ev = n_ev;
    return P;
}

/* gas_pressure: p = K v^m from p at v_at, by the binomial series for small moves */
static double gas_pressure(double p, double v_at, double v, double k, double m, double c2,
                           double c3, double series_step) {
    double x = (v - v_at) / v_at;
    if (fabs(x) <= series_step) return p * (1.0 + x * (m + x * (c2 + x * c3)));
    return k * pow(v, m);
}

/* ArresterBank._off_stop for arrester j: returns the node head */
static double off_stop(void **p, const double *dv, int64_t turns, int64_t j, double sc,
                       double sb, double cv, double zv) {
    double *vol = p[P_A_VOL], *prev = p[P_A_PREV], *flow = p[P_A_FLOW];
    uint8_t *stop = p[P_A_STOP];
    const double *dt = p[P_A_DT];
    double v_old = vol[j], q_old = flow[j], two_dt = 2.0 / dt[j];
    double v_max = ((double *)p[P_A_VMAX])[j], n = ((double *)p[P_A_N])[j];
    double k = ((double *)p[P_A_K])[j], z = ((double *)p[P_A_Z])[j];
    double p_atm = ((double *)p[P_A_PATM])[j], inv_rho_g = 1.0 / ((double *)p[P_A_RHOG])[j];
    double base = z - p_atm * inv_rho_g, neg_n = -n, slope_of = -n * inv_rho_g;
    double rest = sc + q_old - two_dt * v_old;
    double half_cv = 0.5 * cv, tol = dv[D_NEWTON_TOL] * v_old, floor = dv[D_ORIFICE_FLOOR];
    double v = v_old + (v_old - prev[j]);
    if (v < 0.5 * v_old) v = 0.5 * v_old;
    if (v > v_max) v = v_max;
    prev[j] = v_old;
    double c2 = neg_n * (neg_n - 1.0) * 0.5, c3 = neg_n * (neg_n - 1.0) * (neg_n - 2.0) / 6.0;
    double step = dv[D_SERIES_STEP], pg = k * pow(v, neg_n), v_at = v;
    for (int64_t turn = 0; turn < turns; turn++) {
        if (turn) {
            pg = gas_pressure(pg, v_at, v, k, neg_n, c2, c3, step);
            v_at = v;
        }
        double h = base + pg * inv_rho_g;
        double f = rest - sb * h + two_dt * v;
        double ds = sb;
        if (cv > 0.0) {
            double s = sqrt(h - zv > 0.0 ? h - zv : 0.0);
            f -= cv * s;
            ds = sb + half_cv * s / (s * s > floor ? s * s : floor);
        }
        double v_new = v - f / (two_dt - ds * (slope_of * pg / v));
        if (v_new <= 0.0) v_new = 0.5 * v;
        int done = !(fabs(v_new - v) > tol);
        v = v_new;
        if (done) break;
    }
    double head = base + gas_pressure(pg, v_at, v, k, neg_n, c2, c3, step) * inv_rho_g;
    int back = v >= v_max;
    if (back) {
        double q = -(v_max - v_old) / dt[j];
        stop[j] = 1;
        v = v_max;
        head = valve_head(sc - q, sb, cv, zv, 0);
    }
    flow[j] = back ? 0.0 : -two_dt * (v - v_old) - q_old;
    vol[j] = v;
    return head;
}

/* InteriorUpdate, C+ and C- of sections 0 .. m of a run (pointers start at its first
 * section): cm[s] = H[s+1] - (Bm - Rm |Qu[s+1]|) Qu[s+1], cp[s+1] = H[s] + (Bp - Rp |Qd|) Qd.
 * Separate pointers, no overlap, so that the compiler can use vector instructions. */
static void characteristics(double *restrict cm, double *restrict cp1, const double *restrict h,
                            const double *restrict qu1, const double *restrict qd,
                            const double *restrict bm, const double *restrict bp,
                            const double *restrict rm, const double *restrict rp, int64_t m) {
    for (int64_t s = 0; s < m; s++) {
        double qm = qu1[s], qp = qd[s];
        cm[s] = h[s + 1] - (bm[s] - fabs(qm) * rm[s]) * qm;
        cp1[s] = h[s] + (bp[s] - fabs(qp) * rp[s]) * qp;
    }
}

/* InteriorUpdate, heads and flows of sections 0 .. m - 1 of a run */
static void sections(double *restrict h, double *restrict qu, double *restrict qd,
                     const double *restrict cp, const double *restrict cm,
                     const double *restrict inv2b, int64_t m) {
    for (int64_t s = 0; s < m; s++) {
        double q = (cp[s] - cm[s]) * inv2b[s];
        h[s] = (cp[s] + cm[s]) * 0.5;
        qu[s] = q;
        qd[s] = q;
    }
}

/* Whether any h[s] < onset[s], s < m (the compiler will not vectorise this search on its
 * own; SSE2 is part of every x86-64, elsewhere the plain loop runs). */
static int any_below(const double *restrict h, const double *restrict onset, int64_t m) {
    int64_t s = 0;
    int found = 0;
#if defined(__SSE2__)
    __m128d seen = _mm_setzero_pd();
    for (; s + 4 <= m; s += 4) {
        __m128d a = _mm_cmplt_pd(_mm_loadu_pd(h + s), _mm_loadu_pd(onset + s));
        __m128d b = _mm_cmplt_pd(_mm_loadu_pd(h + s + 2), _mm_loadu_pd(onset + s + 2));
        seen = _mm_or_pd(seen, _mm_or_pd(a, b));
    }
    found = _mm_movemask_pd(seen) != 0;
#endif
    for (; s < m; s++) found |= h[s] < onset[s];
    return found;
}

/* Steps k0 .. k1 - 1. Returns the next step to run: k1 when all ran, less when an event
 * buffer might overflow in the next step (the caller grows it and calls again). */
int64_t moc_steps(void **p, int64_t *iv, const double *dv, int64_t k0, int64_t k1) {
    int64_t n = iv[I_N], n_nodes = iv[I_NODES], n_ends = iv[I_ENDS], n_nets = iv[I_NETS];
    int64_t n_fixed = iv[I_FIXED], n_bare = iv[I_BARE], n_arr = iv[I_ARR], turns = iv[I_TURNS];
    double weight = dv[D_WEIGHT], onset_tol = dv[D_ONSET_TOL];
    double *restrict H = p[P_H], *restrict Q = p[P_Q], *restrict C = p[P_C];
    double *Qu = Q, *Qd = Q + n, *CP = C, *CM = C + n;
    const double *restrict b2 = p[P_B2], *restrict r2 = p[P_R2], *restrict inv2b = p[P_INV2B];
    const int64_t *end_cidx = p[P_END_CIDX], *end_qidx = p[P_END_QIDX];
    const int64_t *end_sec = p[P_END_SEC], *end_node = p[P_END_NODE];
    const double *end_invb = p[P_END_INVB], *end_sinvb = p[P_END_SINVB];
    const double *node_invsb = p[P_NODE_INVSB];
    double *cend = p[P_CEND], *sc = p[P_SC], *Hn = p[P_HN];
    const int64_t *fixed_idx = p[P_FIXED_IDX];
    const double *fixed_val = p[P_FIXED_VAL], *cv_t = p[P_CV_T];
    const int64_t *bare_idx = p[P_BARE_IDX], *bare_node = p[P_BARE_NODE];
    const double *bare_sb = p[P_BARE_SB], *bare_zv = p[P_BARE_ZV];
    const int64_t *v_nodes = p[P_V_NODES];
    const double *zv = p[P_ZV];
    const int64_t *a_node = p[P_A_NODE], *a_valve = p[P_A_VALVE];
    const double *a_sb = p[P_A_SB], *a_zv = p[P_A_ZV], *a_hv = p[P_A_HV], *a_z = p[P_A_Z];
    const double *a_rhog = p[P_A_RHOG], *a_patm = p[P_A_PATM], *a_pre = p[P_A_PRE];
    double *a_vol = p[P_A_VOL], *a_prev = p[P_A_PREV], *a_flow = p[P_A_FLOW];
    uint8_t *a_stop = p[P_A_STOP];
    double *restrict hmax = p[P_HMAX], *restrict hmin = p[P_HMIN];
    const int64_t *net_sec = p[P_NET_SEC], *net_end = p[P_NET_END], *a_net = p[P_A_NET];
    const int64_t *net_pipe = p[P_NET_PIPE], *net_node = p[P_NET_NODE];
    int64_t *runs = p[P_RUNS], n_pipes = n_ends / 2;
    double *valve_h = p[P_VALVE_H], *valve_q = p[P_VALVE_Q], *gas = p[P_GAS];
    const double *node_sb = p[P_NODE_SB], *sec_invb = p[P_SEC_INVB];
    Places at_nodes = places(p, P_CAV, n_nodes, &iv[I_EV0]);
    Places in_pipes = places(p, P_CAV + CAV_SLOTS, n, &iv[I_EV1]);
    const double *restrict sec_onset = in_pipes.onset;
    int64_t open_in_pipes = 0; /* sections holding a cavity */
    for (int64_t s = 0; s < n; s++) open_in_pipes += in_pipes.vol[s] > 0.0;

    for (int64_t k = k0; k < k1; k++) {
        if (iv[I_CAP0] - iv[I_EV0] < n_nodes || iv[I_CAP1] - iv[I_EV1] < n) return k;
        /* Networks past their last step are not advanced: nothing of theirs is recorded
         * any more. The others form runs of consecutive networks (one run when, as in
         * check --transient, the longest come first); each run's sections, pipes and
         * nodes are contiguous. */
        int64_t n_runs = 0;
        for (int64_t i = 0; i < n_nets; i++) {
            if (net_end[i] < k) continue;
            if (n_runs && runs[2 * n_runs - 1] == i) runs[2 * n_runs - 1] = i + 1;
            else { runs[2 * n_runs] = i; runs[2 * n_runs + 1] = i + 1; n_runs++; }
        }
        /* interior: C+ and C- from the old state, then heads and flows (InteriorUpdate);
         * C- at a network's last section and C+ at its first are never used (pipe ends
         * take the node solution), so a run's loop leaves them */
        int below = 0; /* a section's head fell below its vapour head */
        for (int64_t r = 0; r < n_runs; r++) {
            int64_t lo = net_sec[runs[2 * r]], hi = net_sec[runs[2 * r + 1]];
            characteristics(CM + lo, CP + lo + 1, H + lo, Qu + lo + 1, Qd + lo, b2 + lo,
                            b2 + n - 1 + lo, r2 + lo, r2 + n - 1 + lo, hi - lo - 1);
            sections(H + lo, Qu + lo, Qd + lo, CP + lo, CM + lo, inv2b + lo, hi - lo);
            below = below || any_below(H + lo, sec_onset + lo, hi - lo);
        }
        /* nodes: H = S_C / S_B, then roots, valves, arresters, cavities */
        for (int64_t r = 0; r < n_runs; r++) {
            int64_t n0 = net_node[runs[2 * r]], n1 = net_node[runs[2 * r + 1]];
            int64_t p0 = net_pipe[runs[2 * r]], p1 = net_pipe[runs[2 * r + 1]];
            for (int64_t i = n0; i < n1; i++) sc[i] = 0.0;
            /* upstream ends, then downstream ends: each node sums its ends in the order
             * of the whole stack's ends, as the numpy loop's bincount does */
            for (int64_t side = 0; side < 2; side++) {
                for (int64_t e = side * n_pipes + p0; e < side * n_pipes + p1; e++) {
                    cend[e] = C[end_cidx[e]];
                    sc[end_node[e]] += cend[e] * end_invb[e];
                }
            }
            for (int64_t i = n0; i < n1; i++) Hn[i] = sc[i] * node_invsb[i];
        }
        for (int64_t i = 0; i < n_fixed; i++) Hn[fixed_idx[i]] = fixed_val[i];
        const double *cv = cv_t + k * n_nets;
        for (int64_t b = 0; b < n_bare; b++) {
            int64_t node = bare_node[b];
            Hn[node] = valve_head(sc[node], bare_sb[b], cv[bare_idx[b]], bare_zv[b], 0);
        }
        for (int64_t j = 0; j < n_arr; j++) {
            int64_t node = a_node[j];
            if (net_end[a_net[j]] < k) continue; /* its network has ended */
            if (!(at_nodes.vol[node] <= 0.0)) continue; /* a cavity holds the piston */
            double acv = a_valve[j] >= 0 ? cv[a_valve[j]] : 0.0;
            int was = a_stop[j];
            double head;
            if (!was) {
                head = off_stop(p, dv, turns, j, sc[node], a_sb[j], acv, a_zv[j]);
            } else {
                head = valve_head(sc[node], a_sb[j], acv, a_zv[j], 0);
                double pressure = a_rhog[j] * (head - a_z[j]) + a_patm[j];
                if (pressure <= a_pre[j]) {
                    a_flow[j] = 0.0;
                } else {
                    a_stop[j] = 0;
                    a_flow[j] = 0.0;
                    a_prev[j] = a_vol[j];
                    head = off_stop(p, dv, turns, j, sc[node], a_sb[j], acv, a_zv[j]);
                }
            }
            Hn[node] = head;
            if (a_stop[j] != was) { /* CavityTracker.allow_node */
                at_nodes.hv[node] = a_stop[j] ? a_hv[j] : -INFINITY;
                at_nodes.onset[node] = at_nodes.hv[node] - onset_tol;
            }
        }
        for (int64_t r = 0; r < n_runs; r++) {
            for (int64_t i = net_node[runs[2 * r]]; i < net_node[runs[2 * r + 1]]; i++) {
                if (!(at_nodes.vol[i] > 0.0 || Hn[i] < at_nodes.onset[i])) continue;
                double hv = at_nodes.hv[i];
                if (advance(&at_nodes, i, hv * node_sb[i] - sc[i], k, weight)) Hn[i] = hv;
            }
        }
        for (int64_t i = 0; i < n_nets; i++) {
            double h_v = Hn[v_nodes[i]], dh = h_v - zv[i];
            valve_h[k * n_nets + i] = h_v;
            valve_q[k * n_nets + i] = cv[i] * sqrt(dh > 0.0 ? dh : 0.0);
        }
        if (below || open_in_pipes) { /* CavityTracker.sections */
            open_in_pipes = 0;
            for (int64_t r = 0; r < n_runs; r++) {
                for (int64_t s = net_sec[runs[2 * r]]; s < net_sec[runs[2 * r + 1]]; s++) {
                    if (!(in_pipes.vol[s] > 0.0 || H[s] < sec_onset[s])) continue;
                    double hv = in_pipes.hv[s], invb = sec_invb[s];
                    double q_in = (CP[s] - hv) * invb, q_out = (hv - CM[s]) * invb;
                    if (advance(&in_pipes, s, q_out - q_in, k, weight)) {
                        H[s] = hv;
                        Qu[s] = q_in;
                        Qd[s] = q_out;
                        open_in_pipes++;
                    }
                }
            }
        }
        /* pipe ends take the node head; their flows follow from the characteristics */
        for (int64_t r = 0; r < n_runs; r++) {
            int64_t p0 = net_pipe[runs[2 * r]], p1 = net_pipe[runs[2 * r + 1]];
            for (int64_t side = 0; side < 2; side++) {
                for (int64_t e = side * n_pipes + p0; e < side * n_pipes + p1; e++) {
                    double h = Hn[end_node[e]];
                    H[end_sec[e]] = h;
                    Q[end_qidx[e]] = (cend[e] - h) * end_sinvb[e];
                }
            }
            for (int64_t s = net_sec[runs[2 * r]]; s < net_sec[runs[2 * r + 1]]; s++) {
                hmax[s] = H[s] > hmax[s] ? H[s] : hmax[s];
                hmin[s] = H[s] < hmin[s] ? H[s] : hmin[s];
            }
        }
        for (int64_t j = 0; j < n_arr; j++) gas[k * n_arr + j] = a_vol[j];
    }
    return k1;
}
