# Writes R's ability.cov (datasets package: six ability and intelligence tests, n.obs = 112,
# a covariance matrix) and R's maximum-likelihood factor analyses of it, k = 1 and 2
# (stats::factanal, unrotated), run to full convergence. k = 2 holds a uniqueness near the
# 0.005 bound ('reading', about 0.052), where EM is slowest: the case the ML stopping rule
# is checked on. Also records how far R's default control stops from the tight optimum.
# Run from this folder:  /usr/bin/Rscript make_ability.R
full <- function(x) sprintf("%.17g", x)
stamp <- function(con, lines) {
  writeLines(paste("#", c(lines,
    paste0("tool: ", R.version.string, " (Debian r-base-core), stats ", packageVersion("stats"),
           ", LAPACK ", La_version()),
    paste0("generated: ", format(Sys.Date()), " by tests/reference/make_ability.R"))), con)
}

cv <- ability.cov$cov
vars <- colnames(cv)
stopifnot(isSymmetric(cv), identical(vars, rownames(cv)), ability.cov$n.obs == 112)

con <- file("ability_cov.csv", "w")
stamp(con, c("Covariance matrix ability.cov$cov from R's datasets package (six tests, n.obs = 112).",
             "call: write of ability.cov$cov with sprintf('%.17g'); first column = variable name."))
writeLines(paste(c("variable", vars), collapse = ","), con)
for (i in seq_along(vars)) writeLines(paste(c(vars[i], full(cv[i, ])), collapse = ","), con)
close(con)

tight <- list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000))
for (k in 1:2) {
  f <- factanal(factors = k, covmat = ability.cov, rotation = "none", control = tight)
  u <- f$uniquenesses
  L <- unclass(f$loadings)
  stationarity <- max(abs(u + rowSums(L^2) - 1))
  stopifnot(f$converged, stationarity < 1e-6)
  default <- factanal(factors = k, covmat = ability.cov, rotation = "none")
  set.seed(20261205)
  multi <- factanal(factors = k, covmat = ability.cov, rotation = "none",
                    control = modifyList(tight, list(nstart = 50)))
  con <- file(sprintf("ability_factanal_k%d.csv", k), "w")
  stamp(con, c(paste0("R stats::factanal maximum likelihood on ability.cov (correlation scale), unrotated, k = ", k, ":"),
               paste0("call: factanal(factors = ", k, ", covmat = ability.cov, rotation = \"none\", ",
                      "control = list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000)))"),
               "columns: variable, uniqueness (f$uniquenesses), f1..fk (unclass(f$loadings), correlation scale;",
               "each loading column's sign is arbitrary).",
               sprintf("checks: max|u + rowSums(L^2) - 1| = %.1e; 50 random starts: max|du| = %.1e;", stationarity,
                       max(abs(u - multi$uniquenesses))),
               sprintf("R's default control stops max|du| = %.1e from these uniquenesses; objective %s.",
                       max(abs(u - default$uniquenesses)), full(f$criteria["objective"]))))
  writeLines(paste(c("variable", "uniqueness", paste0("f", 1:k)), collapse = ","), con)
  for (i in seq_along(vars)) writeLines(paste(c(vars[i], full(u[i]), full(L[i, ])), collapse = ","), con)
  close(con)
}
