# Writes R's maximum-likelihood factor analysis (stats::factanal, k = 1, the only k that four
# series identify) of the daily log returns in eustock_returns.csv (made by make_eustock.R):
# the whole sample and two consecutive 500-date windows (rows 1-500 and 2-501), run to full
# convergence, for the checks that default settings, cold and warm, land on R's optimum.
# Run from this folder:  /usr/bin/Rscript make_eustock_ml.R
full <- function(x) sprintf("%.17g", x)
r <- diff(log(EuStockMarkets))
stopifnot(identical(dim(r), c(1859L, 4L)))
tight <- list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000))
samples <- list(all = 1:1859, first500 = 1:500, second500 = 2:501)
con <- file("eustock_factanal_k1.csv", "w")
writeLines(paste("#", c(
  "R stats::factanal maximum likelihood, k = 1, on daily log returns of R's EuStockMarkets",
  "(r <- diff(log(EuStockMarkets)), the rows of eustock_returns.csv), unrotated.",
  "call: factanal(x = r[rows, ], factors = 1, rotation = \"none\",",
  "  control = list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000)))",
  "samples: all = rows 1-1859; first500 = rows 1-500; second500 = rows 2-501 (the next window).",
  "columns: sample, variable, uniqueness, f1 (correlation scale; the column's sign is arbitrary),",
  "  stationarity = |u + f1^2 - 1|, default_gap = |u - u at factanal's default control|.",
  paste0("tool: ", R.version.string, " (Debian r-base-core), stats ", packageVersion("stats"),
         ", LAPACK ", La_version()),
  paste0("generated: ", format(Sys.Date()), " by tests/reference/make_eustock_ml.R"))), con)
writeLines("sample,variable,uniqueness,f1,stationarity,default_gap", con)
for (name in names(samples)) {
  x <- r[samples[[name]], ]
  f <- factanal(x = x, factors = 1, rotation = "none", control = tight)
  d <- factanal(x = x, factors = 1, rotation = "none")
  stopifnot(f$converged)
  u <- f$uniquenesses
  L <- unclass(f$loadings)[, 1]
  for (i in seq_along(u))
    writeLines(paste(name, names(u)[i], full(u[i]), full(L[i]), sprintf("%.1e", abs(u[i] + L[i]^2 - 1)),
                     sprintf("%.1e", abs(u[i] - d$uniquenesses[i])), sep = ","), con)
}
close(con)
