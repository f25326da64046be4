/* nested.c -- the likelihood-ratio (deviance) test of nested models (see nested.h). */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include "alloc.h"
#include "fit.h"
#include "family_tails.h"

/* The test of the fitted smaller model FS against BIG (FO the fits' options) into OUT:
   the likelihood ratio when the family's parameter was estimated in each, the deviance
   difference when the dispersion is fixed, else the F ratio.  Returns BL_OK, or BL_ESPEC
   when FS's rank is not below BIG's. */
static int
nested_stat (const bl_fit *big, const bl_fit *fs, const bl_fit_opts *fo, bl_nested *out,
             bl_err *err)
{
  const bl_fit_stats *sb = bl_fit_stats_get (big);
  const bl_fit_stats *ss = bl_fit_stats_get (fs);
  const double dd = ss->deviance - sb->deviance;
  if (ss->rank >= sb->rank)
    return bl_fail (err, BL_ESPEC, "--against", "the smaller model's rank (%zu) is not below "
                    "the larger model's (%zu): nothing to test", ss->rank, sb->rank);
  out->dof = sb->rank - ss->rank;
  out->deviance_small = ss->deviance;
  out->deviance_big = sb->deviance;
  out->loglik_small = ss->loglik;
  out->loglik_big = sb->loglik;
  out->fam_par_small = bl_family_par_name (bl_fit_family (big)) ? ss->fam_par : NAN;
  out->fam_par_big = bl_family_par_name (bl_fit_family (big)) ? sb->fam_par : NAN;
  if (bl_family_par_name (bl_fit_family (big)) && fo->fam_par_est) {
    /* The family's parameter (negative binomial theta, the Tweedie power) is estimated in
       each model separately, so the two deviances are measured at different parameters and
       do not subtract: the likelihood ratio 2 (l_big - l_small), both maximized over the
       parameter, is chi-square on the rank difference (Wilks 1938, Ann. Math. Statist. 9,
       60-62; the parameter is common to both models and cancels from the dof). */
    const double lr = 2.0 * (sb->loglik - ss->loglik);
    out->form = "chisq";
    out->statistic = "likelihood-ratio";
    out->stat = lr;
    out->log10_p = isfinite (lr) ? bl_tail_chisq_logQ (lr > 0.0 ? lr : 0.0, (double) out->dof)
                                   / M_LN10 : NAN;
  } else if (!bl_family_has (bl_fit_family (big), BL_FAM_PHI_FREE)
             && !fo->dispersion_pearson) {
    out->form = "chisq";
    out->statistic = "deviance-difference";
    out->stat = dd;
    out->log10_p = bl_tail_chisq_logQ (dd > 0.0 ? dd : 0.0, (double) out->dof) / M_LN10;
  } else {
    out->form = "F";
    out->statistic = "deviance-F";
    out->dof2 = sb->dof_resid;
    out->stat = (dd / (double) out->dof) / sb->phi_pearson;
    out->log10_p = out->dof2 > 0 && isfinite (out->stat)
                   ? bl_tail_f_logQ (out->stat > 0.0 ? out->stat : 0.0, (double) out->dof,
                                     (double) out->dof2) / M_LN10
                   : NAN;
  }
  /* p as its double from the log-space upper tail (0 only below 4.9e-324), log10 p beside */
  out->p = exp (out->log10_p * M_LN10);
  return BL_OK;
}

int
bl_nested_test (const bl_fit *big, const bl_table *t, const bl_terms *small,
                const bl_design_opts *dopt, const bl_fit_opts *fo, bl_nested *out,
                bl_err *err)
{
  const bl_design *db = bl_fit_design (big);
  const bl_fit_stats *sb = bl_fit_stats_get (big);
  const size_t nb = bl_design_n (db);
  bl_design *ds = NULL, *sub = NULL;
  bl_fit *fs = NULL;
  size_t *sel = NULL, k = 0;
  int st = BL_OK;

  memset (out, 0, sizeof *out);
  bl_terms_text (small, out->terms, sizeof out->terms);
  if (!sb->converged)
    return bl_fail (err, BL_ENOCONV, "--against", "the larger model did not converge");
  if (!(ds = bl_design_new (t, bl_design_response (db), small, dopt, err))) {
    /* the design names its terms "--terms"; here they came from --against */
    if (err && strcmp (err->where, "--terms") == 0)
      snprintf (err->where, sizeof err->where, "--against");
    return err ? err->code : BL_EDATA;
  }
  /* every column of the smaller model must be a column of the larger (a sufficient
     condition for nesting that needs no arithmetic) */
  for (size_t j = 0; j < bl_design_p (ds); j++) {
    int found = 0;
    for (size_t q = 0; q < bl_design_p (db) && !found; q++)
      found = strcmp (bl_design_label (ds, j), bl_design_label (db, q)) == 0;
    if (!found) {
      st = bl_fail (err, BL_ESPEC, "--against", "the smaller model is not nested in the "
                    "larger: its column '%s' is not one of the larger model's",
                    bl_design_label (ds, j));
      goto done;
    }
  }
  /* the larger model's rows, as indices into the smaller design's rows (both in table
     order) */
  sel = bl_mallocn (nb ? nb : 1, sizeof *sel);
  if (!sel) {
    st = bl_fail (err, BL_ENOMEM, "--against", "out of memory");
    goto done;
  }
  for (size_t i = 0; i < nb; i++) {
    const size_t tr = bl_design_table_row (db, i);
    while (k < bl_design_n (ds) && bl_design_table_row (ds, k) < tr)
      k++;
    if (k >= bl_design_n (ds) || bl_design_table_row (ds, k) != tr) {
      st = bl_fail (err, BL_EDATA, "--against", "the smaller model does not use row %zu of "
                    "the larger model's rows", tr + 1);
      goto done;
    }
    sel[i] = k;
  }
  if (!(sub = bl_design_subset (ds, sel, nb, err))) {
    st = BL_ENOMEM;
    goto done;
  }
  if (!(fs = bl_fit_new (sub, fo, err))) {
    st = err ? err->code : BL_EDATA;
    goto done;
  }
  if (!bl_fit_stats_get (fs)->converged) {
    st = bl_fail (err, BL_ENOCONV, "--against", "the smaller model did not converge: %s",
                  bl_fit_status (fs)->msg);
    goto done;
  }
  st = nested_stat (big, fs, fo, out, err);
done:
  bl_fit_free (fs);
  bl_design_free (sub);
  bl_design_free (ds);
  bl_free (sel);
  return st;
}
