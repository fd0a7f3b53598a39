/*
 * The compiled floor of `npm run bench`: a plain C implementation of cyclic coordinate descent
 * for the elastic net, written from the published algorithm (Friedman, Hastie & Tibshirani 2010,
 * "Regularization paths for generalized linear models via coordinate descent", J. Stat. Software
 * 33(1)), used only to time the same workload the TypeScript engine runs and to check that both
 * reach the same cross-validation curve. It is not part of the add-in or the engine.
 *
 * Objective, exactly as the engine's (README "Method"), on predictors and target standardized
 * over each problem's own training rows (weighted population SD, all weights 1 here):
 *   (1/(2W)) Σ_i (ỹ_i − x̃_i·b)²  +  λ Σ_j [ α |b_j| + (1 − α)/2 · b_j² ],   W = rows.
 * Coordinate update (the paper's eq. 5): z_j = g_j + d_j b_j,
 *   b_j ← S(z_j, λα) / (d_j + λ(1 − α)),  g_j = (1/W) Σ x̃_ij r_i,  d_j = (1/W) Σ x̃_ij².
 * - Covariance updates (paper §2.2) when rows ≥ predictors and predictors ≤ 500: the gradient
 *   g = c̃ − G̃ b is kept for every j, an update of b_j costs O(p). Each problem's G̃ and c̃
 *   come from sums over blocks of rows (one block per fold): a fold's training sums are the
 *   total less its own block, so the whole cross-validation costs one pass over the data, and the
 *   held-out squared error of a fold comes from its block's sums as well.
 * - Residual updates otherwise: the residual r = ỹ − X̃b is kept; g_j costs O(n).
 * - Sequential strong rule (Tibshirani et al. 2012, JRSS-B 74(2), eq. 7): j is screened in at
 *   λ_k when b_j ≠ 0 or |g_j(λ_{k−1})| ≥ α(2λ_k − λ_{k−1}); after convergence on the screened
 *   set every other j's KKT condition |g_j| ≤ λα is checked and violators are added back.
 * - Within the screened set: full sweeps alternating with sweeps over the nonzero coefficients
 *   until those converge (the paper's §2.6 active-set cycling); warm starts down the grid.
 * - Convergence, the engine's rule (engine/descent.ts): a sweep converges when no coordinate
 *   moved by more than tol × max(λ, 1e-6) in gradient units, max_j (d_j + λ(1−α))|Δb_j|.
 *   A sweep cap per strength (as the engine's) is counted and reported when hit.
 * - A full-data path ends early only when its training fit is exact (residual mean square at or
 *   below 1e-12 of the target's variance, the engine's EXACT_FIT_RATIO); folds then solve the
 *   strengths that path computed.
 * Dot products use four partial sums (plain C does not reassociate sums under -O3 alone).
 *
 * Input: one binary file (little-endian, written by bench/floor.ts):
 *   int32  magic 0x464c4f31, n, p, K (folds), mixes, strengths (per grid), max sweeps, form (0 auto, 1 covariance, 2 residual)
 *   double tolerance, exact-fit ratio
 *   double mixes[mixes]; double grids[mixes][strengths]
 *   int32  fold[n] (0..K−1)
 *   double X[p][n] (column-major); double y[n]
 * Output (text on stdout): "form covariance|residual", "ms <compute time>", per mix
 * "mix <i> <α> top <λ_max from these data, α>0> points <L> sweeps <s> capped <c> misses <m>", and per point
 * "cv <i> <k> <λ> <CV MSE> <nonzero on the full data>".
 *
 * Build: gcc -O3 -o floor floor.c -lm
 */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

static void *must(void *ptr) {
  if (!ptr) {
    fprintf(stderr, "floor: out of memory\n");
    exit(3);
  }
  return ptr;
}
#define ALLOC(type, count) ((type *)must(calloc((size_t)(count) > 0 ? (size_t)(count) : 1, sizeof(type))))

static double dot(const double *a, const double *b, int n) {
  double s0 = 0, s1 = 0, s2 = 0, s3 = 0;
  int i = 0;
  for (; i + 4 <= n; i += 4) {
    s0 += a[i] * b[i];
    s1 += a[i + 1] * b[i + 1];
    s2 += a[i + 2] * b[i + 2];
    s3 += a[i + 3] * b[i + 3];
  }
  for (; i < n; i++) s0 += a[i] * b[i];
  return (s0 + s1) + (s2 + s3);
}

static double soft(double z, double t) {
  if (z > t) return z - t;
  if (z < -t) return z + t;
  return 0;
}

/* Sums of one block of rows about a fixed shift (the full data's column means). */
typedef struct {
  double rows, sy, yy;
  double *sx, *xx, *xy; /* p, p×p, p */
} Sums;

/* One training problem, standardized on its own rows. */
typedef struct {
  int p, gramForm;
  double W;
  double *mean, *sd; /* of each column (shifted units in covariance form) */
  double ymean, ysd;
  unsigned char *frozen;
  double *d, *c; /* d_j, c̃_j */
  double *G;     /* p×p (covariance form) */
  int n;         /* rows (residual form) */
  double *xs;    /* n×p standardized, column-major (residual form) */
  double *ys;    /* ỹ (residual form) */
} Problem;

typedef struct {
  double *b, *g, *r; /* coefficients, gradient (all j), residual (residual form) */
  unsigned char *strong;
  int *set, *active;
  long sweeps;
  int capped, misses;
} State;

static void free_problem(Problem *P) {
  free(P->mean);
  free(P->sd);
  free(P->frozen);
  free(P->d);
  free(P->c);
  free(P->G);
  free(P->xs);
  free(P->ys);
}

/* Covariance form: standardize from the training sums. */
static void problem_from_sums(Problem *P, const Sums *s, int p) {
  P->p = p;
  P->gramForm = 1;
  P->W = s->rows;
  P->mean = ALLOC(double, p);
  P->sd = ALLOC(double, p);
  P->frozen = ALLOC(unsigned char, p);
  P->d = ALLOC(double, p);
  P->c = ALLOC(double, p);
  P->G = ALLOC(double, (size_t)p * p);
  P->xs = NULL;
  P->ys = NULL;
  P->n = 0;
  double W = s->rows;
  P->ymean = s->sy / W;
  double vy = s->yy / W - P->ymean * P->ymean;
  P->ysd = vy > 0 ? sqrt(vy) : 1;
  for (int j = 0; j < p; j++) {
    P->mean[j] = s->sx[j] / W;
    double v = s->xx[(size_t)j * p + j] / W - P->mean[j] * P->mean[j];
    P->frozen[j] = !(v > 1e-24);
    P->sd[j] = P->frozen[j] ? 1 : sqrt(v);
  }
  for (int j = 0; j < p; j++) {
    if (P->frozen[j]) continue;
    for (int k = 0; k < p; k++) {
      if (P->frozen[k]) continue;
      P->G[(size_t)j * p + k] = (s->xx[(size_t)j * p + k] / W - P->mean[j] * P->mean[k]) / (P->sd[j] * P->sd[k]);
    }
    P->d[j] = P->G[(size_t)j * p + j];
    P->c[j] = (s->xy[j] / W - P->mean[j] * P->ymean) / (P->sd[j] * P->ysd);
  }
}

/* Residual form: standardize the training rows themselves. */
static void problem_from_rows(Problem *P, const double *X, const double *y, int n, int p, const int *rows, int m) {
  P->p = p;
  P->gramForm = 0;
  P->W = m;
  P->n = m;
  P->mean = ALLOC(double, p);
  P->sd = ALLOC(double, p);
  P->frozen = ALLOC(unsigned char, p);
  P->d = ALLOC(double, p);
  P->c = ALLOC(double, p);
  P->G = NULL;
  P->xs = ALLOC(double, (size_t)m * p);
  P->ys = ALLOC(double, m);
  double ym = 0;
  for (int t = 0; t < m; t++) ym += y[rows[t]];
  ym /= m;
  double vy = 0;
  for (int t = 0; t < m; t++) vy += (y[rows[t]] - ym) * (y[rows[t]] - ym);
  vy /= m;
  P->ymean = ym;
  P->ysd = vy > 0 ? sqrt(vy) : 1;
  for (int t = 0; t < m; t++) P->ys[t] = (y[rows[t]] - ym) / P->ysd;
  for (int j = 0; j < p; j++) {
    const double *col = X + (size_t)j * n;
    double *out = P->xs + (size_t)j * m;
    double mean = 0;
    for (int t = 0; t < m; t++) mean += col[rows[t]];
    mean /= m;
    double v = 0;
    for (int t = 0; t < m; t++) v += (col[rows[t]] - mean) * (col[rows[t]] - mean);
    v /= m;
    P->mean[j] = mean;
    P->frozen[j] = !(v > 1e-24);
    P->sd[j] = P->frozen[j] ? 1 : sqrt(v);
    for (int t = 0; t < m; t++) out[t] = P->frozen[j] ? 0 : (col[rows[t]] - mean) / P->sd[j];
    P->d[j] = dot(out, out, m) / m;
    P->c[j] = dot(out, P->ys, m) / m;
  }
}

static void state_init(State *S, const Problem *P) {
  int p = P->p;
  S->b = ALLOC(double, p);
  S->g = ALLOC(double, p);
  S->r = P->gramForm ? NULL : ALLOC(double, P->n);
  S->strong = ALLOC(unsigned char, p);
  S->set = ALLOC(int, p);
  S->active = ALLOC(int, p);
  S->sweeps = 0;
  S->capped = 0;
  S->misses = 0;
  memcpy(S->g, P->c, sizeof(double) * p);
  if (S->r) memcpy(S->r, P->ys, sizeof(double) * P->n);
}

static void state_free(State *S) {
  free(S->b);
  free(S->g);
  free(S->r);
  free(S->strong);
  free(S->set);
  free(S->active);
}

/* One sweep over `list`; returns the largest coordinate movement in gradient units. */
static double sweep(const Problem *P, State *S, const int *list, int count, double lambda, double alpha) {
  int p = P->p;
  double l1 = lambda * alpha, l2 = lambda * (1 - alpha), biggest = 0;
  for (int t = 0; t < count; t++) {
    int j = list[t];
    double gj = P->gramForm ? S->g[j] : dot(P->xs + (size_t)j * P->n, S->r, P->n) / P->W;
    double dj = P->d[j] + l2;
    double old = S->b[j];
    double fresh = soft(gj + P->d[j] * old, l1) / dj;
    double delta = fresh - old;
    if (delta == 0) continue;
    S->b[j] = fresh;
    if (P->gramForm) {
      const double *Gj = P->G + (size_t)j * p;
      for (int k = 0; k < p; k++) S->g[k] -= delta * Gj[k];
    } else {
      const double *xj = P->xs + (size_t)j * P->n;
      for (int i = 0; i < P->n; i++) S->r[i] -= delta * xj[i];
    }
    double move = dj * fabs(delta);
    if (move > biggest) biggest = move;
  }
  return biggest;
}

/* Residual form: the gradient of every coordinate from the residual (O(np)). */
static void refresh_gradient(const Problem *P, State *S) {
  if (P->gramForm) return;
  for (int j = 0; j < P->p; j++) S->g[j] = P->frozen[j] ? 0 : dot(P->xs + (size_t)j * P->n, S->r, P->n) / P->W;
}

/* Solves at λ warm-started from the current state (the strong rule uses λ_prev). */
static void solve(const Problem *P, State *S, double lambda, double previous, double alpha, double tol, long cap) {
  int p = P->p, count = 0;
  double cut = alpha * (2 * lambda - previous);
  for (int j = 0; j < p; j++) {
    int keep = !P->frozen[j] && (S->b[j] != 0 || alpha == 0 || fabs(S->g[j]) >= cut);
    S->strong[j] = (unsigned char)keep;
    if (keep) S->set[count++] = j;
  }
  double limit = tol * (lambda > 1e-6 ? lambda : 1e-6);
  long sweeps = 0;
  for (;;) {
    int capped = 0;
    for (;;) {
      if (sweeps >= cap) {
        capped = 1;
        break;
      }
      sweeps++;
      if (sweep(P, S, S->set, count, lambda, alpha) <= limit) break;
      int active = 0;
      for (int t = 0; t < count; t++)
        if (S->b[S->set[t]] != 0) S->active[active++] = S->set[t];
      for (;;) {
        if (sweeps >= cap) {
          capped = 1;
          break;
        }
        sweeps++;
        if (sweep(P, S, S->active, active, lambda, alpha) <= limit) break;
      }
      if (capped) break;
    }
    refresh_gradient(P, S);
    if (capped) {
      S->capped++;
      break;
    }
    int added = 0;
    for (int j = 0; j < p; j++) {
      if (S->strong[j] || P->frozen[j]) continue;
      if (fabs(S->g[j]) > lambda * alpha) {
        S->strong[j] = 1;
        S->set[count++] = j;
        added++;
      }
    }
    if (added == 0) break;
    S->misses += added;
  }
  S->sweeps += sweeps;
}

/* Residual mean square of the standardized problem (the target's variance is 1). */
static double residual_mean_square(const Problem *P, const State *S) {
  if (!P->gramForm) return dot(S->r, S->r, P->n) / P->W;
  double bc = 0, bg = 0;
  for (int j = 0; j < P->p; j++) {
    bc += S->b[j] * P->c[j];
    bg += S->b[j] * S->g[j];
  }
  return 1 - bc - bg;
}

/* Solves down `lambdas` (L points); stores each point's coefficients in coef[k*p..]. Returns the points computed. */
static int run_path(const Problem *P, State *S, const double *lambdas, int L, double alpha, double tol, long cap, double exactRatio,
                    int stopWhenExact, double *coef) {
  for (int k = 0; k < L; k++) {
    solve(P, S, lambdas[k], k == 0 ? lambdas[0] : lambdas[k - 1], alpha, tol, cap);
    memcpy(coef + (size_t)k * P->p, S->b, sizeof(double) * P->p);
    if (stopWhenExact && k + 1 < L && residual_mean_square(P, S) <= exactRatio) return k + 1;
  }
  return L;
}

/* Coefficients in the data's units (per unit of x): β_j = s_y b_j / sd_j. */
static void to_original(const Problem *P, const double *b, double *beta) {
  for (int j = 0; j < P->p; j++) beta[j] = P->frozen[j] ? 0 : P->ysd * b[j] / P->sd[j];
}

static void add_sums(Sums *into, const Sums *from, int p, double sign) {
  into->rows += sign * from->rows;
  into->sy += sign * from->sy;
  into->yy += sign * from->yy;
  for (int j = 0; j < p; j++) {
    into->sx[j] += sign * from->sx[j];
    into->xy[j] += sign * from->xy[j];
  }
  for (size_t t = 0; t < (size_t)p * p; t++) into->xx[t] += sign * from->xx[t];
}

static void sums_alloc(Sums *s, int p) {
  s->rows = s->sy = s->yy = 0;
  s->sx = ALLOC(double, p);
  s->xy = ALLOC(double, p);
  s->xx = ALLOC(double, (size_t)p * p);
}

static void sums_free(Sums *s) {
  free(s->sx);
  free(s->xy);
  free(s->xx);
}

static double now_ms(void) {
  struct timespec t;
  clock_gettime(CLOCK_MONOTONIC, &t);
  return t.tv_sec * 1e3 + t.tv_nsec / 1e6;
}

static void read_exact(FILE *f, void *into, size_t size, size_t count) {
  if (fread(into, size, count, f) != count) {
    fprintf(stderr, "floor: input file is truncated\n");
    exit(2);
  }
}

int main(int argc, char **argv) {
  if (argc != 2) {
    fprintf(stderr, "usage: floor <input file>\n");
    return 2;
  }
  FILE *f = fopen(argv[1], "rb");
  if (!f) {
    fprintf(stderr, "floor: cannot open %s\n", argv[1]);
    return 2;
  }
  int32_t head[8];
  read_exact(f, head, sizeof(int32_t), 8);
  if (head[0] != 0x464c4f31) {
    fprintf(stderr, "floor: not a floor input file\n");
    return 2;
  }
  int n = head[1], p = head[2], K = head[3], M = head[4], L = head[5], form = head[7];
  long cap = head[6];
  double settings[2];
  read_exact(f, settings, sizeof(double), 2);
  double tol = settings[0], exactRatio = settings[1];
  double *mixes = ALLOC(double, M), *grids = ALLOC(double, (size_t)M * L);
  read_exact(f, mixes, sizeof(double), M);
  read_exact(f, grids, sizeof(double), (size_t)M * L);
  int32_t *fold = ALLOC(int32_t, n);
  read_exact(f, fold, sizeof(int32_t), n);
  double *X = ALLOC(double, (size_t)n * p), *y = ALLOC(double, n);
  read_exact(f, X, sizeof(double), (size_t)n * p);
  read_exact(f, y, sizeof(double), n);
  fclose(f);

  double start = now_ms();
  int gramForm = form == 1 || (form == 0 && n >= p && p <= 500);
  /* Rows of each fold's block. */
  int *blockSize = ALLOC(int, K), **blockRows = ALLOC(int *, K);
  for (int i = 0; i < n; i++) blockSize[fold[i]]++;
  for (int b = 0; b < K; b++) blockRows[b] = ALLOC(int, blockSize[b]), blockSize[b] = 0;
  for (int i = 0; i < n; i++) blockRows[fold[i]][blockSize[fold[i]]++] = i;

  double *sse = ALLOC(double, (size_t)M * L);
  int *points = ALLOC(int, M), *nonzero = ALLOC(int, (size_t)M * L), *capped = ALLOC(int, M), *misses = ALLOC(int, M);
  long *sweeps = ALLOC(long, M);
  double *tops = ALLOC(double, M);
  double *coef = ALLOC(double, (size_t)L * p), *beta = ALLOC(double, p);
  Sums *blocks = NULL, total;
  double *shift = ALLOC(double, p);
  double yshift = 0;

  if (gramForm) {
    /* One pass: each block's sums about the full data's means. */
    for (int j = 0; j < p; j++) {
      double s = 0;
      for (int i = 0; i < n; i++) s += X[(size_t)j * n + i];
      shift[j] = s / n;
    }
    for (int i = 0; i < n; i++) yshift += y[i];
    yshift /= n;
    blocks = ALLOC(Sums, K);
    sums_alloc(&total, p);
    int largest = 0;
    for (int b = 0; b < K; b++)
      if (blockSize[b] > largest) largest = blockSize[b];
    double *cols = ALLOC(double, (size_t)largest * p), *ys = ALLOC(double, largest);
    for (int b = 0; b < K; b++) {
      int m = blockSize[b];
      Sums *s = &blocks[b];
      sums_alloc(s, p);
      s->rows = m;
      for (int t = 0; t < m; t++) ys[t] = y[blockRows[b][t]] - yshift;
      for (int j = 0; j < p; j++)
        for (int t = 0; t < m; t++) cols[(size_t)j * m + t] = X[(size_t)j * n + blockRows[b][t]] - shift[j];
      for (int t = 0; t < m; t++) s->sy += ys[t];
      s->yy = dot(ys, ys, m);
      for (int j = 0; j < p; j++) {
        const double *cj = cols + (size_t)j * m;
        double sx = 0;
        for (int t = 0; t < m; t++) sx += cj[t];
        s->sx[j] = sx;
        s->xy[j] = dot(cj, ys, m);
        for (int k = 0; k <= j; k++) s->xx[(size_t)j * p + k] = s->xx[(size_t)k * p + j] = dot(cj, cols + (size_t)k * m, m);
      }
      add_sums(&total, s, p, 1);
    }
    free(cols);
    free(ys);
  }

  /* Per mix: the full-data path, then every fold down the strengths it computed. */
  for (int a = 0; a < M; a++) {
    double alpha = mixes[a];
    const double *grid = grids + (size_t)a * L;
    Problem full;
    if (gramForm) {
      problem_from_sums(&full, &total, p);
    } else {
      int *all = ALLOC(int, n);
      for (int i = 0; i < n; i++) all[i] = i;
      problem_from_rows(&full, X, y, n, p, all, n);
      free(all);
    }
    double top = 0;
    for (int j = 0; j < p; j++)
      if (!full.frozen[j] && fabs(full.c[j]) > top) top = fabs(full.c[j]);
    tops[a] = alpha > 0 ? top / alpha : NAN;
    State S;
    state_init(&S, &full);
    points[a] = run_path(&full, &S, grid, L, alpha, tol, cap, exactRatio, 1, coef);
    sweeps[a] = S.sweeps;
    capped[a] = S.capped;
    misses[a] = S.misses;
    for (int k = 0; k < points[a]; k++) {
      int count = 0;
      for (int j = 0; j < p; j++) count += coef[(size_t)k * p + j] != 0;
      nonzero[(size_t)a * L + k] = count;
    }
    state_free(&S);
    free_problem(&full);
    for (int v = 0; v < K; v++) {
      Problem P;
      int m = blockSize[v];
      if (gramForm) {
        Sums train;
        sums_alloc(&train, p);
        add_sums(&train, &total, p, 1);
        add_sums(&train, &blocks[v], p, -1);
        problem_from_sums(&P, &train, p);
        sums_free(&train);
      } else {
        int *rows = ALLOC(int, n - m), count = 0;
        for (int i = 0; i < n; i++)
          if (fold[i] != v) rows[count++] = i;
        problem_from_rows(&P, X, y, n, p, rows, count);
        free(rows);
      }
      State T;
      state_init(&T, &P);
      run_path(&P, &T, grid, points[a], alpha, tol, cap, exactRatio, 0, coef);
      sweeps[a] += T.sweeps;
      capped[a] += T.capped;
      misses[a] += T.misses;
      for (int k = 0; k < points[a]; k++) {
        to_original(&P, coef + (size_t)k * p, beta);
        double err = 0;
        if (gramForm) {
          /* Σ (y' − c0 − βᵀx')² over the held-out block, from its sums (shifted units). */
          const Sums *h = &blocks[v];
          double c0 = P.ymean, lin = 0, quad = 0;
          for (int j = 0; j < p; j++) c0 -= beta[j] * P.mean[j];
          for (int j = 0; j < p; j++) {
            if (beta[j] == 0) continue;
            lin += beta[j] * (-2 * h->xy[j] + 2 * c0 * h->sx[j]);
            double row = 0;
            for (int l = 0; l < p; l++)
              if (beta[l] != 0) row += h->xx[(size_t)j * p + l] * beta[l];
            quad += beta[j] * row;
          }
          err = h->yy - 2 * c0 * h->sy + c0 * c0 * h->rows + lin + quad;
          if (err < 0) err = 0;
        } else {
          for (int t = 0; t < m; t++) {
            int i = blockRows[v][t];
            double pred = P.ymean;
            for (int j = 0; j < p; j++)
              if (beta[j] != 0) pred += beta[j] * (X[(size_t)j * n + i] - P.mean[j]);
            double e = y[i] - pred;
            err += e * e;
          }
        }
        sse[(size_t)a * L + k] += err;
      }
      state_free(&T);
      free_problem(&P);
    }
  }
  double elapsed = now_ms() - start;

  printf("form %s\n", gramForm ? "covariance" : "residual");
  printf("ms %.3f\n", elapsed);
  for (int a = 0; a < M; a++) {
    printf("mix %d %.17g top %.17g points %d sweeps %ld capped %d misses %d\n", a, mixes[a], tops[a], points[a], sweeps[a], capped[a], misses[a]);
    for (int k = 0; k < points[a]; k++)
      printf("cv %d %d %.17g %.17g %d\n", a, k, grids[(size_t)a * L + k], sse[(size_t)a * L + k] / n, nonzero[(size_t)a * L + k]);
  }
  return 0;
}
