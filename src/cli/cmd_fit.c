/* cmd_fit.c -- 'ballast fit DATA': read, build the design, fit one model, report it. */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "ballast.h"
#include "cli.h"

#define MAX_LIST 256

static const char usage_text[] =
  "usage: ballast fit DATA --response COL [--terms TERMS] [OPTION]...\n"
  "\n"
  "Fit one model to DATA (CSV or TSV, optionally gzip-compressed; '-' reads standard input)\n"
  "and report it as text, or as JSON with --json.\n"
  "\n"
  "model:\n"
  "  --response COL          the response column (required)\n"
  "  --terms TERMS           comma-separated terms: a column, log(t), sqrt(t), exp(t),\n"
  "                          pow(t, k), cross(t1, t2); names with spaces in [brackets]\n"
  "  --no-intercept          leave out the intercept column\n"
  "  --method glm|ols|wls    glm (default): maximum likelihood by IRLS; ols: the gaussian\n"
  "                          family with the identity link; wls: weighted least squares\n"
  "                          with --weights and/or --variance\n"
  "  --variance EXPR         wls variance function: COL^K (proportional to a positive\n"
  "                          column to the power K) or fitted^K (to the fitted mean);\n"
  "                          K a number or 'est' (maximum likelihood)\n"
  "  --transform NAME        ordinary least squares of log(y), sqrt(y), or a Box-Cox\n"
  "                          power: boxcox (estimated) or boxcox=L; reported on y's scale\n"
  "  --shift C               transform y + C (for y <= 0; results depend on C)\n"
  "  --family NAME           gaussian (default), poisson, gamma, inverse-gaussian\n"
  "  --link NAME             identity, log, inverse; default: the canonical link (identity,\n"
  "                          log, inverse), but log for inverse-gaussian, whose canonical\n"
  "                          link 1/mu^2 is not offered\n"
  "  --weights COL           prior weights (each > 0)\n"
  "  --offset TERM           a term added with coefficient 1, e.g. log(hours) for exposure\n"
  "  --categorical A,B       treat these columns as categorical\n"
  "  --reference COL=LEVEL   reference level of a categorical column (repeatable);\n"
  "                          default: the first level in byte order\n"
  "  --dispersion KIND       model (default) or pearson (poisson: scale the standard\n"
  "                          errors by the Pearson estimate)\n"
  "  --level X               confidence level of the intervals (default 0.95)\n"
  "  --se KIND               standard errors: model (default), hc0, hc1, hc2, hc3\n"
  "                          (heteroscedasticity-consistent sandwich)\n"
  "\n"
  "input:\n"
  "  --delimiter C           field delimiter (default ',', or tab for .tsv names)\n"
  "  --decimal-comma         numbers are written 3,14\n"
  "\n"
  "numerics:\n"
  "  --max-iter N            IRLS iteration limit (default 50)\n"
  "  --epsilon X             convergence: |D_old - D| <= X (|D| + 0.1) (default 1e-10)\n"
  "  --solver KIND           auto (default), extended, streamed\n"
  "  --threads N             worker threads, 1 or 2 (default 2)\n"
  "\n"
  "output:\n"
  "  --json                  one JSON document instead of the text report\n"
  "  -o, --output FILE       write the report to FILE (atomically) instead of stdout\n"
  "  -q, --quiet             no warnings on stderr\n"
  "  -h, --help              this help\n"
  "\n"
  "exit status: 0 done; 1 data or model problem (including no convergence);\n"
  "2 usage, option or term-syntax error.\n";

enum {
  OPT_RESPONSE = 256, OPT_TERMS, OPT_NO_INTERCEPT, OPT_METHOD, OPT_FAMILY, OPT_LINK,
  OPT_WEIGHTS, OPT_OFFSET, OPT_CATEGORICAL, OPT_REFERENCE, OPT_DISPERSION, OPT_LEVEL,
  OPT_DELIMITER, OPT_DECIMAL_COMMA, OPT_MAX_ITER, OPT_EPSILON, OPT_SOLVER, OPT_THREADS,
  OPT_JSON, OPT_VARIANCE, OPT_TRANSFORM, OPT_SHIFT, OPT_SE
};

static const struct option long_opts[] = {
  { "response", required_argument, NULL, OPT_RESPONSE },
  { "terms", required_argument, NULL, OPT_TERMS },
  { "no-intercept", no_argument, NULL, OPT_NO_INTERCEPT },
  { "method", required_argument, NULL, OPT_METHOD },
  { "family", required_argument, NULL, OPT_FAMILY },
  { "link", required_argument, NULL, OPT_LINK },
  { "weights", required_argument, NULL, OPT_WEIGHTS },
  { "offset", required_argument, NULL, OPT_OFFSET },
  { "categorical", required_argument, NULL, OPT_CATEGORICAL },
  { "reference", required_argument, NULL, OPT_REFERENCE },
  { "dispersion", required_argument, NULL, OPT_DISPERSION },
  { "level", required_argument, NULL, OPT_LEVEL },
  { "delimiter", required_argument, NULL, OPT_DELIMITER },
  { "decimal-comma", no_argument, NULL, OPT_DECIMAL_COMMA },
  { "max-iter", required_argument, NULL, OPT_MAX_ITER },
  { "epsilon", required_argument, NULL, OPT_EPSILON },
  { "solver", required_argument, NULL, OPT_SOLVER },
  { "threads", required_argument, NULL, OPT_THREADS },
  { "json", no_argument, NULL, OPT_JSON },
  { "variance", required_argument, NULL, OPT_VARIANCE },
  { "transform", required_argument, NULL, OPT_TRANSFORM },
  { "shift", required_argument, NULL, OPT_SHIFT },
  { "se", required_argument, NULL, OPT_SE },
  { "output", required_argument, NULL, 'o' },
  { "quiet", no_argument, NULL, 'q' },
  { "help", no_argument, NULL, 'h' },
  { NULL, 0, NULL, 0 }
};

/* Split a comma-separated list in place into LIST (at most MAX_LIST); -1 when too long or an
   entry is empty. */
static int
split_list (char *s, const char **list, size_t *n)
{
  for (char *tok = s;;) {
    char *const comma = strchr (tok, ',');
    if (comma)
      *comma = '\0';
    while (*tok == ' ')
      tok++;
    for (char *e = tok + strlen (tok); e > tok && e[-1] == ' ';)
      *--e = '\0';
    if (!*tok || *n >= MAX_LIST)
      return -1;
    list[(*n)++] = tok;
    if (!comma)
      return 0;
    tok = comma + 1;
  }
}

/* --variance COL^K | fitted^K, K a number or 'est'.  COL may be written in brackets.  Fills
   FO and *COL (pointing into BUF, a copy of TEXT); 0, or -1 for a malformed expression. */
static int
parse_variance (const char *text, char *buf, size_t cap, bl_fit_opts *fo, const char **col)
{
  char *hat;
  if (strlen (text) >= cap)
    return -1;
  strcpy (buf, text);
  hat = strrchr (buf, '^');
  if (!hat || hat == buf || hat[1] == '\0')
    return -1;
  *hat = '\0';
  if (strcmp (hat + 1, "est") == 0)
    fo->power_est = 1;
  else if (cli_parse_double (hat + 1, &fo->power) != 0)
    return -1;
  if (strcmp (buf, "fitted") == 0) {
    fo->variance = BL_VARIANCE_FITTED;
    *col = NULL;
    return 0;
  }
  if (buf[0] == '[') {
    const size_t len = strlen (buf);
    if (len < 3 || buf[len - 1] != ']')
      return -1;
    buf[len - 1] = '\0';
    memmove (buf, buf + 1, len - 1);
  }
  fo->variance = BL_VARIANCE_COLUMN;
  *col = buf;
  return 0;
}

int
cmd_fit (int argc, char **argv)
{
  const char *response = NULL, *terms_text = NULL, *weights = NULL, *offset_text = NULL;
  const char *output = NULL, *data = NULL;
  const char *categorical[MAX_LIST], *reference[MAX_LIST];
  size_t ncat = 0, nref = 0;
  int json = 0, quiet = 0, intercept = 1, c, rc = EXIT_DATA, method_given = 0;
  const char *varcol = NULL;
  char varbuf[1024];
  bl_fit_opts fo;
  bl_table_opts to;
  bl_design_opts dopt;
  bl_terms *terms = NULL, *offset = NULL;
  bl_table *table = NULL;
  bl_design *design = NULL;
  bl_fit *fit = NULL;
  bl_err err;
  cli_out out;
  char *catbuf = NULL;

  bl_fit_opts_init (&fo);
  bl_table_opts_init (&to);
  bl_design_opts_init (&dopt);
  bl_err_clear (&err);
  fo.irls.cancel = &cli_cancel;
  optind = 1;
  opterr = 0;
  while ((c = getopt_long (argc, argv, ":o:qh", long_opts, NULL)) != -1) {
    switch (c) {
    case OPT_RESPONSE: response = optarg; break;
    case OPT_TERMS: terms_text = optarg; break;
    case OPT_NO_INTERCEPT: intercept = 0; break;
    case OPT_METHOD:
      method_given = 1;
      if (strcmp (optarg, "glm") == 0)
        fo.method = BL_METHOD_GLM;
      else if (strcmp (optarg, "ols") == 0)
        fo.method = BL_METHOD_OLS;
      else if (strcmp (optarg, "wls") == 0)
        fo.method = BL_METHOD_WLS;
      else {
        free (catbuf);
        return cli_usage_error ("fit", "--method", "unknown method '%s' (expected glm, ols or "
                                "wls)", optarg);
      }
      break;
    case OPT_VARIANCE:
      if (parse_variance (optarg, varbuf, sizeof varbuf, &fo, &varcol) != 0) {
        free (catbuf);
        return cli_usage_error ("fit", "--variance", "expected COL^K or fitted^K with K a "
                                "number or 'est', got '%s'", optarg);
      }
      break;
    case OPT_TRANSFORM:
      fo.lambda_est = 0;
      if (strcmp (optarg, "log") == 0)
        fo.transform = BL_TRANSFORM_LOG;
      else if (strcmp (optarg, "sqrt") == 0)
        fo.transform = BL_TRANSFORM_SQRT;
      else if (strcmp (optarg, "boxcox") == 0) {
        fo.transform = BL_TRANSFORM_BOXCOX;
        fo.lambda_est = 1;
      } else if (strncmp (optarg, "boxcox=", 7) == 0
                 && cli_parse_double (optarg + 7, &fo.lambda) == 0) {
        fo.transform = BL_TRANSFORM_BOXCOX;
      } else {
        free (catbuf);
        return cli_usage_error ("fit", "--transform", "expected log, sqrt, boxcox or "
                                "boxcox=L, got '%s'", optarg);
      }
      break;
    case OPT_SHIFT:
      if (cli_parse_double (optarg, &fo.shift) != 0) {
        free (catbuf);
        return cli_usage_error ("fit", "--shift", "expected a number, got '%s'", optarg);
      }
      fo.shift_given = 1;
      break;
    case OPT_SE:
      if (strcmp (optarg, "model") == 0)
        fo.se = BL_SE_MODEL;
      else if (strcmp (optarg, "hc0") == 0)
        fo.se = BL_SE_HC0;
      else if (strcmp (optarg, "hc1") == 0)
        fo.se = BL_SE_HC1;
      else if (strcmp (optarg, "hc2") == 0)
        fo.se = BL_SE_HC2;
      else if (strcmp (optarg, "hc3") == 0)
        fo.se = BL_SE_HC3;
      else {
        free (catbuf);
        return cli_usage_error ("fit", "--se", "expected model, hc0, hc1, hc2 or hc3, got "
                                "'%s'", optarg);
      }
      break;
    case OPT_FAMILY:
      if (!(fo.fam = bl_family_find (optarg)))
        return cli_usage_error ("fit", "--family", "unknown family '%s' (expected gaussian, "
                                "poisson, gamma or inverse-gaussian)", optarg);
      break;
    case OPT_LINK:
      if (!(fo.link = bl_link_find (optarg)))
        return cli_usage_error ("fit", "--link", "unknown link '%s' (expected identity, log "
                                "or inverse)", optarg);
      break;
    case OPT_WEIGHTS: weights = optarg; break;
    case OPT_OFFSET: offset_text = optarg; break;
    case OPT_CATEGORICAL:
      free (catbuf);
      catbuf = strdup (optarg);
      ncat = 0;
      if (!catbuf || split_list (catbuf, categorical, &ncat) != 0) {
        free (catbuf);
        return cli_usage_error ("fit", "--categorical", "expected a comma-separated list of "
                                "column names, got '%s'", optarg);
      }
      break;
    case OPT_REFERENCE:
      if (nref >= MAX_LIST || !strchr (optarg, '=')) {
        free (catbuf);
        return cli_usage_error ("fit", "--reference", "expected COL=LEVEL, got '%s'", optarg);
      }
      reference[nref++] = optarg;
      break;
    case OPT_DISPERSION:
      if (strcmp (optarg, "pearson") == 0)
        fo.dispersion_pearson = 1;
      else if (strcmp (optarg, "model") == 0)
        fo.dispersion_pearson = 0;
      else {
        free (catbuf);
        return cli_usage_error ("fit", "--dispersion", "expected model or pearson, got '%s'",
                                optarg);
      }
      break;
    case OPT_LEVEL:
      if (cli_parse_double (optarg, &fo.level) != 0 || !(fo.level > 0.0 && fo.level < 1.0)) {
        free (catbuf);
        return cli_usage_error ("fit", "--level", "expected a number between 0 and 1, got "
                                "'%s'", optarg);
      }
      break;
    case OPT_DELIMITER:
      if (strcmp (optarg, "\\t") == 0 || strcmp (optarg, "tab") == 0)
        to.delimiter = '\t';
      else if (strlen (optarg) == 1 && optarg[0] != '"' && optarg[0] != '\n'
               && optarg[0] != '\r')
        to.delimiter = optarg[0];
      else {
        free (catbuf);
        return cli_usage_error ("fit", "--delimiter", "expected one character (or 'tab'), "
                                "got '%s'", optarg);
      }
      break;
    case OPT_DECIMAL_COMMA: to.decimal_comma = 1; break;
    case OPT_MAX_ITER:
      if (cli_parse_size (optarg, &fo.irls.max_iter) != 0) {
        free (catbuf);
        return cli_usage_error ("fit", "--max-iter", "expected a positive integer, got '%s'",
                                optarg);
      }
      break;
    case OPT_EPSILON:
      if (cli_parse_double (optarg, &fo.irls.epsrel) != 0 || !(fo.irls.epsrel > 0.0)) {
        free (catbuf);
        return cli_usage_error ("fit", "--epsilon", "expected a positive number, got '%s'",
                                optarg);
      }
      break;
    case OPT_SOLVER:
      if (strcmp (optarg, "auto") == 0)
        fo.irls.solver = BL_SOLVER_AUTO;
      else if (strcmp (optarg, "extended") == 0)
        fo.irls.solver = BL_SOLVER_EXTENDED;
      else if (strcmp (optarg, "streamed") == 0)
        fo.irls.solver = BL_SOLVER_STREAMED;
      else {
        free (catbuf);
        return cli_usage_error ("fit", "--solver", "expected auto, extended or streamed, got "
                                "'%s'", optarg);
      }
      break;
    case OPT_THREADS: {
      size_t t;
      if (cli_parse_size (optarg, &t) != 0 || t > 2) {
        free (catbuf);
        return cli_usage_error ("fit", "--threads", "expected 1 or 2, got '%s'", optarg);
      }
      fo.irls.threads = (unsigned) t;
      break;
    }
    case OPT_JSON: json = 1; break;
    case 'o': output = optarg; break;
    case 'q': quiet = 1; break;
    case 'h':
      free (catbuf);
      fputs (usage_text, stdout);
      return EXIT_DONE;
    case ':':
      free (catbuf);
      return cli_usage_error ("fit", argv[optind - 1], "this option needs a value");
    default:
      free (catbuf);
      return cli_usage_error ("fit", argv[optind - 1], "unknown option");
    }
  }
  if (optind >= argc) {
    free (catbuf);
    return cli_usage_error ("fit", NULL, "no DATA file given");
  }
  if (argc - optind > 1) {
    free (catbuf);
    return cli_usage_error ("fit", argv[optind + 1], "only one DATA file is taken");
  }
  data = argv[optind];
  if (!response) {
    free (catbuf);
    return cli_usage_error ("fit", "--response", "the response column is required");
  }

  /* Syntax first, before any work. */
  if (terms_text && !(terms = bl_terms_parse (terms_text, "--terms", &err)))
    goto fail;
  if (offset_text) {
    if (!(offset = bl_terms_parse (offset_text, "--offset", &err)))
      goto fail;
    if (bl_terms_count (offset) != 1) {
      bl_fail (&err, BL_ESPEC, "--offset", "expected one term, got %zu",
               bl_terms_count (offset));
      goto fail;
    }
  }
  if (fo.variance != BL_VARIANCE_NONE) {
    if (method_given && fo.method != BL_METHOD_WLS) {
      free (catbuf);
      bl_terms_free (terms);
      bl_terms_free (offset);
      return cli_usage_error ("fit", "--variance", "a variance function needs --method wls");
    }
    fo.method = BL_METHOD_WLS;
    fo.variance_col = varcol;
  }
  if (fo.method == BL_METHOD_WLS && fo.variance == BL_VARIANCE_NONE && !weights) {
    free (catbuf);
    bl_terms_free (terms);
    bl_terms_free (offset);
    return cli_usage_error ("fit", "--method", "wls needs --weights COL or --variance EXPR");
  }
  if (fo.shift_given && fo.transform == BL_TRANSFORM_NONE) {
    free (catbuf);
    bl_terms_free (terms);
    bl_terms_free (offset);
    return cli_usage_error ("fit", "--shift", "a shift applies only with --transform");
  }
  if (fo.transform != BL_TRANSFORM_NONE && !method_given)
    fo.method = BL_METHOD_OLS;
  if (fo.method == BL_METHOD_OLS && fo.fam == NULL)
    fo.fam = &bl_family_gaussian;

  to.categorical = categorical;
  to.n_categorical = ncat;
  if (!(table = bl_table_read (data, &to, &err)))
    goto fail;
  dopt.intercept = intercept;
  dopt.reference = reference;
  dopt.n_reference = nref;
  dopt.weights = weights;
  dopt.offset = offset;
  dopt.variance = varcol;
  if (!(design = bl_design_new (table, response, terms, &dopt, &err)))
    goto fail;
  if (!(fit = bl_fit_glm (design, &fo, &err)))
    goto fail;

  if (!quiet) {
    const bl_warnings *wn = bl_fit_warnings (fit);
    for (size_t i = 0; i < bl_design_ndrop (design); i++) {
      size_t n;
      const char *r = bl_design_drop_reason (design, i, &n);
      cli_warn (data, "%zu row%s set aside (%s)", n, n == 1 ? "" : "s", r);
    }
    for (size_t i = 0; i < wn->n; i++)
      cli_warn ("fit", "%s", wn->msg[i]);
  }
  if (cli_out_open (&out, output) != 0) {
    rc = EXIT_DATA;
    goto done;
  }
  {
    bl_report_info info = { data, terms, offset, weights, bl_version () };
    const int st = json ? bl_report_fit_json (out.f, fit, &info, &err)
                        : bl_report_fit_text (out.f, fit, &info, &err);
    if (st != BL_OK) {
      cli_out_abort (&out);
      goto fail;
    }
  }
  if (cli_out_commit (&out) != 0) {
    rc = EXIT_DATA;
    goto done;
  }
  if (!bl_fit_stats_get (fit)->converged) {
    cli_error ("fit", "%s", bl_fit_status (fit)->msg);
    rc = EXIT_DATA;
  } else {
    rc = EXIT_DONE;
  }
  goto done;
fail:
  rc = cli_lib_error ("fit", &err);
done:
  bl_fit_free (fit);
  bl_design_free (design);
  bl_table_free (table);
  bl_terms_free (terms);
  bl_terms_free (offset);
  free (catbuf);
  return rc;
}
