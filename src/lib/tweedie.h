/* tweedie.h -- the Tweedie compound Poisson-gamma density, 1 < p < 2. */
#ifndef BALLAST_TWEEDIE_H
#define BALLAST_TWEEDIE_H
#ifdef __cplusplus
extern "C" {
#endif

#define BL_TWEEDIE_TERMS_MAX 100000   /* series terms at most, each side of the largest */

/* log f(y; mu, phi, p) for y > 0, and log P(Y = 0) for y == 0, with mean mu > 0, dispersion
   phi > 0 and power 1 < p < 2 (Var Y = phi mu^p).  The positive part is the series of Dunn &
   Smyth (2005, Statistics and Computing 15, 267-280, section 4), summed in log space outward
   from its largest term until the terms fall below 1e-17 of the sum; the zero mass is
   exp(-mu^(2-p) / (phi (2-p))).  Returns -HUGE_VAL for y < 0 or arguments out of range. */
double bl_tweedie_logpdf (double y, double mu, double phi, double p);

/* log W(y; phi, p) of the series above, y > 0: term by term when STRIDE is 0, else every
   m-th term times m when the terms' bell is wide (family_tweedie.c gives the bound). */
double bl_tweedie_log_w (double y, double phi, double p, int stride);

/* P(Y <= y): the zero mass plus the compound sum over N of Poisson(lambda) weights times the
   Gamma(N alpha, gamma) CDF, lambda = mu^(2-p) / (phi (2-p)), alpha = (2-p)/(p-1),
   gamma = phi (p-1) mu^(p-1) (the compound Poisson-gamma representation; Jorgensen 1997,
   section 4.2).  The sum runs over N until the Poisson weights are negligible. */
double bl_tweedie_cdf (double y, double mu, double phi, double p);
/* log P(Y <= y) and log P(Y > y) by the same sum in log space, each accurate where it is
   small (family_tweedie.c). */
double bl_tweedie_logcdf (double y, double mu, double phi, double p);
double bl_tweedie_logsf (double y, double mu, double phi, double p);
/* The P quantile: 0 when P <= P(Y = 0), else by bisection on the CDF. */
double bl_tweedie_quantile (double prob, double mu, double phi, double p);

/* The Tweedie unit deviance d(y, mu) = 2 [ y^(2-p) / ((1-p)(2-p)) - y mu^(1-p) / (1-p)
   + mu^(2-p) / (2-p) ] (Jorgensen 1997, The Theory of Dispersion Models, ch. 4). */
double bl_tweedie_unit_dev (double y, double mu, double p);

#ifdef __cplusplus
}
#endif
#endif
