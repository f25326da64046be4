/* family_tails.h -- probabilities in log space, accurate in both tails: the normal, gamma and
   beta tails behind the families' log CDF hooks, the quantile residuals and the p-values.
   Not installed.

   Each function returns a natural logarithm; none underflows where GSL's own _P and _Q
   functions do (beyond about 38 standard deviations for the normal): there the log is
   computed from an asymptotic series or a continued fraction with its prefactor in log
   space (sources in family_tails.c).  Arguments outside the domain give NAN. */
#ifndef BALLAST_FAMILY_TAILS_H
#define BALLAST_FAMILY_TAILS_H
#ifdef __cplusplus
extern "C" {
#endif

/* log(1 - e^X) for X <= 0 (-HUGE_VAL at X = 0), and log(e^A + e^B). */
double bl_tail_log1mexp (double x);
double bl_tail_logaddexp (double a, double b);

/* log Q(X) = log P(Z > X) and log Phi(X) = log P(Z <= X) for a standard normal Z. */
double bl_tail_norm_logQ (double x);
double bl_tail_norm_logP (double x);
/* log P(A < Z <= B), A < B (either may be infinite): the tail with less mass is used, so
   the result keeps its digits when A and B are far out on either side. */
double bl_tail_norm_log_interval (double a, double b);
/* The X with log Q(X) = LQ, for LQ <= log(1/2) (X >= 0); Newton's method on log Q where
   exp(LQ) is below the double range. */
double bl_tail_norm_Qinv_log (double lq);

/* log P(A, X) and log Q(A, X): the regularized lower and upper incomplete gamma functions,
   A > 0, X >= 0 (Abramowitz & Stegun 1964, 6.5.1-6.5.3). */
double bl_tail_gamma_logP (double a, double x);
double bl_tail_gamma_logQ (double a, double x);

/* log I_X(A, B), the regularized incomplete beta function (Abramowitz & Stegun 26.5.1),
   A, B > 0, 0 <= X <= 1, with X1 = 1 - X passed as the caller computed it exactly (the
   complement is I_X1(B, A), so a caller passes X and X1 the other way round for it). */
double bl_tail_beta_logI (double a, double b, double x, double x1);

/* Upper-tail p-values in log space: chi-square on DOF, F on (D1, D2), and the two-sided
   p of a t on NU (NU = HUGE_VAL: normal) at |T|. */
double bl_tail_chisq_logQ (double x, double dof);
double bl_tail_f_logQ (double f, double d1, double d2);
double bl_tail_t_logp2 (double t, double nu);

#ifdef __cplusplus
}
#endif
#endif
