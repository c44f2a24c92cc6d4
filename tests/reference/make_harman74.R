# Writes the Harman (1967) 24-test correlation matrix from R's datasets package and
# R's maximum-likelihood factor analyses of it (stats::factanal, k = 1..5, unrotated).
# Run from this folder:  /usr/bin/Rscript make_harman74.R
# Why tight control: factanal's default optimiser stops early (factr 1e7 scale); we want
# the converged optimum so our engine can be checked to ~1e-6, not to the optimiser's slack.

full <- function(x) sprintf("%.17g", x)
stamp <- function(con, lines) {
  writeLines(paste("#", c(lines,
    paste0("tool: ", R.version.string, " (Debian r-base-core), stats ", packageVersion("stats"),
           ", LAPACK ", La_version()),
    paste0("generated: ", format(Sys.Date()), " by tests/reference/make_harman74.R"))), con)
}

r <- Harman74.cor$cov
vars <- colnames(r)
stopifnot(isSymmetric(r), identical(vars, rownames(r)), Harman74.cor$n.obs == 145)

# 1. The correlation matrix itself.
con <- file("harman74_cor.csv", "w")
stamp(con, c("Correlation matrix Harman74.cor$cov from R's datasets package (24 psychological tests,",
             "Holzinger and Swineford 1939, as tabulated by Harman 1967), n.obs = 145.",
             "call: write of Harman74.cor$cov with sprintf('%.17g'); first column = variable name",
             "(R's spelling kept, including 'PargraphComprehension')."))
writeLines(paste(c("variable", vars), collapse = ","), con)
for (i in seq_along(vars)) writeLines(paste(c(vars[i], full(r[i, ])), collapse = ","), con)
close(con)

# 2. factanal for k = 1..5.
control <- list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000))
call_text <- paste0("factanal(factors = k, covmat = Harman74.cor, rotation = \"none\", ",
                    "control = list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000)))")
summary_rows <- character()
checks <- character()
set.seed(20261201)  # only for the 50-random-start check below; the recorded fits use nstart = 1
for (k in 1:5) {
  f <- factanal(factors = k, covmat = Harman74.cor, rotation = "none", control = control)
  u <- f$uniquenesses
  L <- unclass(f$loadings)
  # At an interior ML optimum diag(L L' + Psi) = diag(S) = 1 (Lawley and Maxwell 1971).
  stationarity <- max(abs(u + rowSums(L^2) - 1))
  stopifnot(f$converged, stationarity < 1e-6)
  # Is nstart = 1 the global optimum? Compare with 50 random starts.
  multi <- factanal(factors = k, covmat = Harman74.cor, rotation = "none",
                    control = modifyList(control, list(nstart = 50)))
  checks <- c(checks, sprintf("k = %d: max|u + rowSums(L^2) - 1| = %.1e; 50 random starts: max|du| = %.1e, objective difference %.1e",
                              k, stationarity, max(abs(u - multi$uniquenesses)),
                              f$criteria["objective"] - multi$criteria["objective"]))
  heywood <- vars[u <= 0.005 + 1e-8]
  con <- file(sprintf("harman74_factanal_k%d.csv", k), "w")
  stamp(con, c(paste0("R stats::factanal maximum likelihood, unrotated, k = ", k, ":"),
               paste0("call: ", sub("factors = k", paste0("factors = ", k), call_text, fixed = TRUE)),
               "columns: variable, uniqueness (f$uniquenesses), f1..fk (unclass(f$loadings), unrotated;",
               "each loading column's sign is arbitrary: compare up to a sign flip per column).",
               paste0("converged = ", f$converged, "; Heywood (uniqueness at the 0.005 bound): ",
                      if (length(heywood)) paste(heywood, collapse = " ") else "none")))
  writeLines(paste(c("variable", "uniqueness", paste0("f", 1:k)), collapse = ","), con)
  for (i in seq_along(vars)) writeLines(paste(c(vars[i], full(u[i]), full(L[i, ])), collapse = ","), con)
  close(con)
  summary_rows <- c(summary_rows, paste(k, full(f$STATISTIC), f$dof, full(f$PVAL),
    full(f$criteria["objective"]), f$criteria["counts.function"], f$criteria["counts.gradient"],
    f$converged, full(min(u)), length(heywood), f$n.obs, sep = ","))
}
con <- file("harman74_factanal_summary.csv", "w")
stamp(con, c("R stats::factanal on Harman74.cor, k = 1..5, fit statistics.",
             paste0("call: ", call_text),
             "statistic = f$STATISTIC (Bartlett-corrected: (n.obs - 1 - (2p + 5)/6 - 2k/3) * objective),",
             "dof = f$dof, p_value = f$PVAL (pchisq upper tail), objective = f$criteria['objective']",
             "(tr(S Sigma^-1) - log det(S Sigma^-1) - p at the optimum), counts = optim's function and",
             "gradient evaluations, heywood_count = uniquenesses within 1e-8 of the 0.005 lower bound.",
             "checks (same control, set.seed(20261201), nstart = 50):", checks))
writeLines("k,statistic,dof,p_value,objective,function_evaluations,gradient_evaluations,converged,min_uniqueness,heywood_count,n_obs", con)
writeLines(summary_rows, con)
close(con)
