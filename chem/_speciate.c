/* The kernel's Newton iteration for one point, compiled.
 *
 * The same equations and the same steps as chem/_kernel.py's _iterate for a
 * batch of one (read that file first: every line here has its counterpart
 * there, and tests/core/test_native_kernel.py compares the two at random
 * points).  numpy spends most of a single small solve in per-call overhead;
 * here one Newton step over 60-odd species costs a few microseconds.
 *
 * Unknowns: u (ln free activities of the components, H+ first) and the
 * ionic strength I.  At fixed activity coefficients the equilibrium
 * minimises f(u) = sum_s c_s(u) - T.u, c_s = exp(lnK_s - ln g_s + nu_s.u);
 * solids are inequalities A_q.u <= b_q (active set), fixed gases and a held
 * pH equalities E_k.u = e_k.  The H+ row of the Newton system is replaced by
 * the charge balance when z_comp is given.
 *
 * Returns 1 converged, 0 not converged within max_iter, -1 gave up on the
 * ionic strength (the caller's nested search takes over), -2 a singular
 * Newton system (the caller's least-squares path takes over), -3 no memory.
 * Built by hatch_build.py; chem/_native.py loads it with ctypes and falls
 * back to numpy when it is missing.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define LN10 2.302585092994045684
#define STEP_MAX 8.0
#define STEP_TOL 1e-9
#define EXP_MAX 690.0

typedef struct {
    int ns, nc, ne, nq;
    const double *nu, *lnk, *z2, *size, *totals, *z_comp, *eq_rows, *eq_rhs, *sol_a, *sol_b;
    const unsigned char *allowed;
    int model;            /* 0 ideal, 1 Davies, 2 extended Debye-Hueckel */
    double a, b, inert_i, inert_q, cap_i;
    int charge_balance, counter_row;
    const int *sp_start, *sp_col;   /* nu by species, non-zero entries only (CSR) */
    const double *sp_val;
} problem;

static double dfun(const problem *p, double ionic, int s) {
    double si = ionic > 0.0 ? sqrt(ionic) : 0.0;
    if (p->model == 1) return si / (1.0 + si) - 0.3 * ionic;
    return si / (1.0 + p->b * p->size[s] * si);
}

static double ddfun(const problem *p, double ionic, int s) {
    double sf = sqrt(ionic > 1e-16 ? ionic : 1e-16);
    if (p->model == 1) return 1.0 / (2.0 * sf * (1.0 + sf) * (1.0 + sf)) - 0.3;
    double den = 1.0 + p->b * p->size[s] * sf;
    return 1.0 / (2.0 * sf * den * den);
}

static void ln_gamma(const problem *p, double ionic, double *lng) {
    if (p->model == 0) { memset(lng, 0, sizeof(double) * p->ns); return; }
    if (p->model == 1) {
        double d = dfun(p, ionic, 0);
        for (int s = 0; s < p->ns; s++) lng[s] = -LN10 * p->a * p->z2[s] * d;
        return;
    }
    for (int s = 0; s < p->ns; s++) lng[s] = -LN10 * p->a * p->z2[s] * dfun(p, ionic, s);
}

static void concentrations(const problem *p, const double *u, const double *lng, double *c) {
    for (int s = 0; s < p->ns; s++) {
        double x = p->lnk[s] - lng[s];
        for (int e = p->sp_start[s]; e < p->sp_start[s + 1]; e++) x += p->sp_val[e] * u[p->sp_col[e]];
        c[s] = exp(x < EXP_MAX ? x : EXP_MAX);
    }
}

static double objective(const problem *p, const double *u, const double *c) {
    double f = 0.0;
    for (int s = 0; s < p->ns; s++) f += c[s];
    for (int j = 0; j < p->nc; j++) f -= p->totals[j] * u[j];
    return f;
}

/* A constraint row r.u = b in the scaled unknowns: its inverse norm (and b - r.u in *resid). */
static double row_scale(int nc, const double *r, const double *s, const double *u, double b, double *resid) {
    double nn = 0.0, ru = b;
    for (int j = 0; j < nc; j++) { double v = r[j] * s[j]; nn += v * v; ru -= r[j] * u[j]; }
    *resid = ru;
    nn = sqrt(nn);
    return 1.0 / (nn > 1e-300 ? nn : 1e-300);
}

/* Row and column ``at`` of the KKT matrix k (n x n): the constraint row r, scaled by s and w. */
static void put_row(double *k, int n, int at, int nc, const double *r, const double *s, double w) {
    for (int j = 0; j < nc; j++) {
        double v = r[j] * s[j] * w;
        k[(size_t)at * n + j] = v;
        k[(size_t)j * n + at] = v;
    }
}

/* Solve k x = r (n x n, row-major) by Gaussian elimination with partial pivoting; k and r are overwritten. */
static int lu_solve(int n, double *k, double *r) {
    for (int col = 0; col < n; col++) {
        int piv = col;
        double best = fabs(k[(size_t)col * n + col]);
        for (int i = col + 1; i < n; i++) {
            double v = fabs(k[(size_t)i * n + col]);
            if (v > best) { best = v; piv = i; }
        }
        if (!(best > 0.0) || !isfinite(best)) return -1;
        if (piv != col) {
            for (int j = 0; j < n; j++) {
                double t = k[(size_t)col * n + j]; k[(size_t)col * n + j] = k[(size_t)piv * n + j]; k[(size_t)piv * n + j] = t;
            }
            double t = r[col]; r[col] = r[piv]; r[piv] = t;
        }
        double d = k[(size_t)col * n + col];
        for (int i = col + 1; i < n; i++) {
            double m = k[(size_t)i * n + col] / d;
            if (m == 0.0) continue;
            for (int j = col + 1; j < n; j++) k[(size_t)i * n + j] -= m * k[(size_t)col * n + j];
            r[i] -= m * r[col];
        }
    }
    for (int i = n - 1; i >= 0; i--) {
        double acc = r[i];
        for (int j = i + 1; j < n; j++) acc -= k[(size_t)i * n + j] * r[j];
        r[i] = acc / k[(size_t)i * n + i];
        if (!isfinite(r[i])) return -1;
    }
    return 0;
}

int pm_iterate(int ns, int nc, const double *nu, const double *lnk, const double *z2, const double *size,
               int model, double a, double b, double inert_i, const double *totals,
               int charge_balance, const double *z_comp, double inert_q,
               int ne, const double *eq_rows, const double *eq_rhs, int counter_row,
               int nq, const double *sol_a, const double *sol_b, const unsigned char *allowed,
               int freeze_ionic, double cap_i, int max_iter, int presweep,
               double *u, double *ionic_io, unsigned char *active, double *lam_e, double *lam_s, int *iters_out)
{
    int nnz = 0;
    for (size_t e = 0; e < (size_t)ns * nc; e++) if (nu[e] != 0.0) nnz++;
    int *sp_start = (int *)malloc(sizeof(int) * (ns + 1) + sizeof(int) * (nnz + 1));
    double *sp_val = (double *)malloc(sizeof(double) * (nnz + 1));
    if (!sp_start || !sp_val) { free(sp_start); free(sp_val); return -3; }
    int *sp_col = sp_start + ns + 1;
    nnz = 0;
    for (int s_ = 0; s_ < ns; s_++) {
        sp_start[s_] = nnz;
        for (int j = 0; j < nc; j++) {
            double v = nu[(size_t)s_ * nc + j];
            if (v != 0.0) { sp_col[nnz] = j; sp_val[nnz] = v; nnz++; }
        }
    }
    sp_start[ns] = nnz;
    problem P = {ns, nc, ne, nq, nu, lnk, z2, size, totals, z_comp, eq_rows, eq_rhs, sol_a, sol_b, allowed,
                 model, a, b, inert_i, inert_q, cap_i, charge_balance, counter_row, sp_start, sp_col, sp_val};
    const problem *p = &P;
    int nmax = nc + 1 + ne + nq;
    size_t need = (size_t)ns * 4 + (size_t)nc * 8 + (size_t)nmax * nmax + (size_t)nmax * 3 + (size_t)ne + nq * 2;
    double *mem = (double *)malloc(need * sizeof(double));
    if (!mem) { free(sp_start); free(sp_val); return -3; }
    double *lng = mem, *c = lng + ns, *c_new = c + ns, *zs = c_new + ns;
    double *g = zs + ns, *s = g + nc, *d = s + nc, *u_new = d + nc, *held = u_new + nc, *tmp = held + nc,
           *zrow = tmp + nc, *pin = zrow + nc;
    double *k = pin + nc, *rhs = k + (size_t)nmax * nmax, *le = rhs + nmax, *ls = le + nmax,
           *norm = ls + nmax, *qn = norm + ne;
    double ionic = *ionic_io;
    int update_i = !freeze_ionic && model != 0;
    double omega = 1.0, last_di = 0.0, last_step = INFINITY;
    int near_prev = 0, gave_up = 0, converged = 0, its = 0;

    for (int j = 0; j < ne; j++) lam_e[j] = 0.0;
    for (int q = 0; q < nq; q++) lam_s[q] = 0.0;
    /* each species' charge from its components (for the charge balance row) */
    if (charge_balance) {
        for (int s_ = 0; s_ < ns; s_++) {
            double zz = 0.0;
            for (int j = 0; j < nc; j++) zz += nu[(size_t)s_ * nc + j] * z_comp[j];
            zs[s_] = zz;
        }
    }
    /* components an equality pins (a fixed gas's): the sweeps leave them alone */
    for (int j = 0; j < nc; j++) {
        pin[j] = 0.0;
        for (int e = 0; e < ne; e++) if (eq_rows[(size_t)e * nc + j] != 0.0) pin[j] = 1.0;
    }

    if (presweep && nq == 0) {
        /* from a crude start, Newton on f creeps (about one ln unit a step while a component is far
         * too high): first damped log-ratio sweeps that give each component its share, with u_H
         * settled on the proton balance after each (kernel.starting_values does the same for a batch) */
        ln_gamma(p, ionic, lng);
        int h_free = pin[0] == 0.0;
        for (int sweep = 0; sweep < 12; sweep++) {
            concentrations(p, u, lng, c);
            double moved = 0.0;
            for (int j = 1; j < nc; j++) { g[j] = 0.0; held[j] = 0.0; }
            for (int s_ = 0; s_ < ns; s_++)
                for (int e = sp_start[s_]; e < sp_start[s_ + 1]; e++) {
                    double v = sp_val[e];
                    if (v > 0.0 && sp_col[e] > 0) { g[sp_col[e]] += v * c[s_]; held[sp_col[e]] += v * v * c[s_]; }
                }
            for (int j = 1; j < nc; j++) {
                if (pin[j] != 0.0) continue;
                double m = g[j] > 1e-300 ? g[j] : 1e-300;
                double nbar = held[j] / m;
                if (nbar < 1.0) nbar = 1.0;
                double step = log(totals[j] / m) / nbar;
                if (!isfinite(step)) step = 0.0;
                if (step > 200.0) step = 200.0;
                if (step < -200.0) step = -200.0;
                tmp[j] = step;
                if (fabs(step) > moved) moved = fabs(step);
            }
            for (int j = 1; j < nc; j++) if (pin[j] == 0.0) u[j] += tmp[j];
            if (h_free) {
                for (int t = 0; t < 3; t++) {
                    concentrations(p, u, lng, c);
                    double num = -totals[0], den = 0.0;
                    for (int s_ = 0; s_ < ns; s_++) {
                        double vh = nu[(size_t)s_ * nc];
                        if (vh != 0.0) { num += vh * c[s_]; den += vh * vh * c[s_]; }
                    }
                    double du = -num / (den > 1e-300 ? den : 1e-300);
                    if (!isfinite(du)) du = 0.0;
                    if (du > 4.0) du = 4.0;
                    if (du < -4.0) du = -4.0;
                    u[0] += du;
                    if (fabs(du) > moved) moved = fabs(du);
                }
            }
            if (moved < 0.05) break;
        }
    }

    for (its = 1; its <= max_iter; its++) {
        ln_gamma(p, ionic, lng);
        concentrations(p, u, lng, c);
        double f0 = objective(p, u, c);
        int joint = update_i ? near_prev : 0;

        /* ---- the KKT step (_kkt_step) ---- */
        for (int j = 0; j < nc; j++) { g[j] = -totals[j]; held[j] = 0.0; }
        int ji = joint ? 1 : 0, o = nc + ji, n = o + ne + nq;
        memset(k, 0, sizeof(double) * (size_t)n * n);
        memset(rhs, 0, sizeof(double) * n);
        for (int s_ = 0; s_ < ns; s_++) {
            double cs = c[s_];
            int e0 = sp_start[s_], e1 = sp_start[s_ + 1];
            for (int e = e0; e < e1; e++) {
                int j = sp_col[e];
                double vj = sp_val[e];
                g[j] += vj * cs;
                held[j] += fabs(vj) * cs;
                double w = cs * vj;
                for (int f = e0; f < e1; f++) k[(size_t)j * n + sp_col[f]] += w * sp_val[f];
            }
        }
        for (int j = 0; j < nc; j++) {
            double dg = k[(size_t)j * n + j];
            double fl = 1e-12 * fabs(totals[j]);
            if (fl < 1e-300) fl = 1e-300;
            s[j] = 1.0 / sqrt(dg > fl ? dg : fl);
        }
        for (int j = 0; j < nc; j++) {
            for (int l = 0; l < nc; l++) k[(size_t)j * n + l] *= s[j] * s[l];
            k[(size_t)j * n + j] += 1e-14;
            rhs[j] = -g[j] * s[j];
        }
        for (int e = 0; e < ne; e++) {
            const double *er = eq_rows + (size_t)e * nc;
            double ru;
            norm[e] = row_scale(nc, er, s, u, eq_rhs[e], &ru);
            put_row(k, n, o + e, nc, er, s, norm[e]);
            rhs[o + e] = ru * norm[e];
        }
        for (int q = 0; q < nq; q++) {
            const double *ar = sol_a + (size_t)q * nc;
            double ru;
            int ii = o + ne + q;
            qn[q] = row_scale(nc, ar, s, u, sol_b[q], &ru);
            if (active[q]) {
                put_row(k, n, ii, nc, ar, s, qn[q]);
                rhs[ii] = ru * qn[q];
            } else {
                k[(size_t)ii * n + ii] = 1.0;
            }
        }
        if (ji) {
            double kk = 0.0, i_comp = inert_i;
            for (int j = 0; j < nc; j++) { tmp[j] = 0.0; zrow[j] = 0.0; }
            for (int s_ = 0; s_ < ns; s_++) {
                double dl = -LN10 * a * z2[s_] * ddfun(p, ionic, s_);
                double cd = c[s_] * -dl, cz = c[s_] * z2[s_];
                for (int e = sp_start[s_]; e < sp_start[s_ + 1]; e++) {
                    tmp[sp_col[e]] += cd * sp_val[e];
                    zrow[sp_col[e]] += cz * sp_val[e];
                }
                kk += cz * -dl;
                i_comp += 0.5 * cz;
            }
            for (int j = 0; j < nc; j++) {
                k[(size_t)j * n + nc] = tmp[j] * s[j];
                k[(size_t)nc * n + j] = 0.5 * zrow[j] * s[j];
            }
            k[(size_t)nc * n + nc] = 0.5 * kk - 1.0;
            rhs[nc] = -(i_comp - ionic);
            if (counter_row >= 0 && ne) {
                double mu = lam_e[counter_row];
                k[(size_t)nc * n + o + counter_row] = (mu >= 0 ? 0.5 : -0.5) * norm[counter_row];
            }
        }
        if (charge_balance && nc > 1) {
            double qq = inert_q;
            for (int s_ = 0; s_ < ns; s_++) qq += c[s_] * zs[s_];
            for (int j = 1; j < nc; j++) {
                double m = (s[0] / s[j]) * z_comp[j];
                if (m == 0.0) continue;
                for (int col = 0; col < n; col++) k[col] += m * k[(size_t)j * n + col];
            }
            rhs[0] = -s[0] * qq;
        }
        if (lu_solve(n, k, rhs) != 0) { *iters_out = its; free(mem); free(sp_start); free(sp_val); return -2; }
        double big = 0.0;
        for (int j = 0; j < nc; j++) { d[j] = rhs[j] * s[j]; if (fabs(d[j]) > big) big = fabs(d[j]); }
        double d_i = ji ? rhs[nc] : 0.0;
        for (int e = 0; e < ne; e++) le[e] = rhs[o + e] * norm[e];
        for (int q = 0; q < nq; q++) ls[q] = active[q] ? rhs[o + ne + q] * qn[q] : 0.0;

        /* ---- step length: cap, blocking solids, Armijo backtracking ---- */
        double cap = STEP_MAX / (big > 1e-300 ? big : 1e-300);
        if (cap > 1.0) cap = 1.0;
        double amax = 1.0, alpha = cap;
        int block = -1;
        if (nq) {
            double best = INFINITY;
            int bj = 0;
            for (int q = 0; q < nq; q++) {
                const double *ar = sol_a + (size_t)q * nc;
                double ad = 0.0, slack = sol_b[q];
                for (int j = 0; j < nc; j++) { ad += d[j] * ar[j]; slack -= ar[j] * u[j]; }
                double al = INFINITY;
                if (!active[q] && allowed[q] && ad > 1e-300) al = (slack > 0.0 ? slack : 0.0) / ad;
                qn[q] = al;         /* the row norms are not needed again this step */
                if (al < best) best = al;
            }
            /* blocking within round-off of each other (symmetric solids): the first, as numpy does */
            for (int q = nq - 1; q >= 0; q--) if (qn[q] <= best * (1.0 + 1e-9)) bj = q;
            block = best < 1.0 ? bj : -1;
            amax = best < 1.0 ? best : 1.0;
            alpha = cap < amax ? cap : amax;
        }
        double slope = 0.0, sc = 0.0, tu = 0.0;
        for (int j = 0; j < nc; j++) { slope += g[j] * d[j]; tu += totals[j] * u[j]; }
        for (int s_ = 0; s_ < ns; s_++) sc += c[s_];
        sc += fabs(tu) + 1e-300;
        int trust = slope < 0 && fabs(slope) > 1e-13 * sc && !joint;
        for (int j = 0; j < nc; j++) u_new[j] = u[j] + alpha * d[j];
        concentrations(p, u_new, lng, c_new);
        if (trust) {
            double f1 = objective(p, u_new, c_new);
            int bad = !(f1 <= f0 + 1e-4 * alpha * slope);
            for (int t = 0; t < 50 && bad; t++) {
                alpha *= 0.5;
                for (int j = 0; j < nc; j++) u_new[j] = u[j] + alpha * d[j];
                concentrations(p, u_new, lng, c_new);
                f1 = objective(p, u_new, c_new);
                if (f1 <= f0 + 1e-4 * alpha * slope) bad = 0;
                else if (alpha * big < 1e-14) bad = 0;
            }
        }
        if (nq && block >= 0 && alpha >= amax * (1 - 1e-12) && amax < cap) active[block] = 1;
        memcpy(u, u_new, sizeof(double) * nc);
        double step_now = alpha * big, impact = 0.0;
        for (int j = 0; j < nc; j++) {
            double den = held[j] + fabs(totals[j]);
            double sh = held[j] / (den > 1e-300 ? den : 1e-300);
            double v = fabs(d[j]) * (sh > 1e-12 ? sh : 1e-12);
            if (v > impact) impact = v;
        }
        impact *= alpha;
        int small = alpha == 1.0 && (step_now < STEP_TOL || impact < STEP_TOL ||
                                     (step_now < 1e-7 && step_now > 0.1 * last_step));
        last_step = step_now;
        if (ne) memcpy(lam_e, le, sizeof(double) * ne);
        if (nq) memcpy(lam_s, ls, sizeof(double) * nq);
        int done;
        if (update_i) {
            double rel = 0.0;
            for (int j = 0; j < nc; j++) {
                double r = g[j];
                for (int e = 0; e < ne; e++) r += le[e] * eq_rows[(size_t)e * nc + j];
                for (int q = 0; q < nq; q++) r += ls[q] * sol_a[(size_t)q * nc + j];
                double den = held[j] + fabs(totals[j]);
                double v = fabs(r) / (den > 1e-300 ? den : 1e-300);
                if (v > rel || isnan(v)) rel = v;
            }
            int near = rel < 1e-2 || (near_prev && rel < 0.3);
            double i_new = inert_i;
            for (int s_ = 0; s_ < ns; s_++) i_new += 0.5 * c_new[s_] * z2[s_];
            if (counter_row >= 0 && ne) i_new += 0.5 * fabs(le[counter_row]);
            if (isfinite(i_new)) { if (counter_row < 0 && i_new > cap_i) i_new = cap_i; }
            else i_new = ionic;
            double delta = near ? i_new - ionic : 0.0;
            int flip = delta * last_di < 0;
            double om = flip ? 0.5 * omega : (omega * 1.25 < 1.0 ? omega * 1.25 : 1.0);
            omega = om;
            if (near) last_di = delta;
            double lagged = ionic + om * delta;
            int jw = joint && near;
            double stepped = ionic + alpha * d_i;
            if (stepped < 0.1 * ionic) stepped = 0.1 * ionic;
            if (counter_row < 0 && stepped > cap_i) stepped = cap_i;
            ionic = jw ? stepped : lagged;
            gave_up = om < 1.0 / 256 && !jw;
            double di = jw ? fabs(alpha * d_i) + fabs(i_new - stepped) : (near ? fabs(delta) : INFINITY);
            near_prev = near;
            done = small && di <= 2e-14 * (ionic > 1e-300 ? ionic : 1e-300) + 1e-18;
        } else {
            done = small;
        }
        if (nq && done) {
            double tmax = 0.0;
            for (int j = 0; j < nc; j++) if (fabs(totals[j]) > tmax) tmax = fabs(totals[j]);
            double floor_ = -1e-14 * (tmax > 1e-300 ? tmax : 1e-300);
            int worst = -1;
            double wv = INFINITY;
            for (int q = 0; q < nq; q++) if (active[q] && ls[q] < floor_ && ls[q] < wv) { wv = ls[q]; worst = q; }
            if (worst >= 0) { active[worst] = 0; done = 0; }
        }
        if (done) { converged = 1; break; }   /* the batch marks a done point converged even if it gave up */
        if (gave_up) break;
        if (!isfinite(u[0])) break;
    }
    if (its > max_iter) its = max_iter;
    *ionic_io = ionic;
    *iters_out = its;
    free(mem);
    free(sp_start);
    free(sp_val);
    if (converged) return 1;
    return gave_up ? -1 : 0;
}

/* pm_iterate with every per-point array in one buffer (one pointer to pass from Python):
 * lnk[ns] totals[nc] z_comp[nc] eq_rows[ne*nc] eq_rhs[ne] sol_a[nq*nc] sol_b[nq] allowed[nq]
 * u[nc] ionic[1] active[nq] lam_e[ne] lam_s[nq] iterations[1]; allowed and active as 0.0/1.0.
 * u, ionic, active, lam_e, lam_s and iterations are written back. */
int pm_iterate_packed(int ns, int nc, int ne, int nq, const double *nu, const double *z2, const double *size,
                      int model, double a, double b, double inert_i, int charge_balance, double inert_q,
                      int counter_row, int freeze_ionic, double cap_i, int max_iter, int presweep, double *buf)
{
    const double *lnk = buf, *totals = lnk + ns, *z_comp = totals + nc, *eq_rows = z_comp + nc,
                 *eq_rhs = eq_rows + (size_t)ne * nc, *sol_a = eq_rhs + ne, *sol_b = sol_a + (size_t)nq * nc,
                 *allowed_d = sol_b + nq;
    double *u = (double *)(allowed_d + nq), *ionic = u + nc, *active_d = ionic + 1, *lam_e = active_d + nq,
           *lam_s = lam_e + ne, *its_d = lam_s + nq;
    unsigned char *flags = (unsigned char *)calloc((size_t)2 * nq + 2, 1);
    if (!flags) return -3;
    unsigned char *allowed = flags, *active = flags + nq + 1;
    for (int q = 0; q < nq; q++) { allowed[q] = allowed_d[q] != 0.0; active[q] = active_d[q] != 0.0; }
    int its = 0;
    int status = pm_iterate(ns, nc, nu, lnk, z2, size, model, a, b, inert_i, totals, charge_balance, z_comp,
                            inert_q, ne, eq_rows, eq_rhs, counter_row, nq, sol_a, sol_b, allowed, freeze_ionic,
                            cap_i, max_iter, presweep, u, ionic, active, lam_e, lam_s, &its);
    for (int q = 0; q < nq; q++) active_d[q] = active[q] ? 1.0 : 0.0;
    *its_d = (double)its;
    free(flags);
    return status;
}
