# Portfolio risk in R's one-factor maximum-likelihood model of the EuStockMarkets returns:
# systematic, specific and total variance of two portfolios and their Euler contributions
# by asset and by factor. Run from this folder after make_eustock.R:
#   /usr/bin/Rscript make_eustock_risk.R
# Then make_eustock_risk.py recomputes the same figures with numpy from R's model.
#
# Scale: factanal fits the correlation matrix (scale-free: the uniquenesses do not depend
# on n or n - 1). Our engine's covariance divides by n (the sum of the weights; see
# make_eustock_pca.py), so the model is put on the covariance scale with the standard
# deviations that divide by n: loadings x sd_n, uniquenesses x sd_n^2.

full <- function(x) sprintf("%.17g", x)
tool <- paste0("tool: ", R.version.string, " (Debian r-base-core), stats ", packageVersion("stats"),
               ", LAPACK ", La_version())
made <- paste0("generated: ", format(Sys.Date()), " by tests/reference/make_eustock_risk.R")

# The same returns as eustock_returns.csv (written by make_eustock.R with an exact round trip).
csv <- read.csv("eustock_returns.csv", comment.char = "#", check.names = FALSE)
r <- as.matrix(csv[, -1])
stopifnot(identical(dim(r), c(1859L, 4L)),
          identical(as.vector(r), as.vector(diff(log(EuStockMarkets)))))  # bit for bit
names <- colnames(r)
n <- nrow(r)

# k = 1: with p = 4 variables the degrees of freedom ((p - k)^2 - p - k) / 2 are 2 for k = 1
# and -1 for k = 2. The tight optimiser control of make_harman74.R.
control <- list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000))
fa <- factanal(r, factors = 1, rotation = "none", control = control)
stopifnot(fa$converged)
u <- fa$uniquenesses
lambda <- as.vector(fa$loadings[, 1])
diag_gap <- max(abs(u + lambda^2 - 1))  # Lawley and Maxwell: diag(Sigma) = diag(S) at the optimum
# How well R's own optimum is determined: 50 separate fits from random starting
# uniquenesses (each one optimisation; nstart > 1 would keep only the best), and R's
# default control.
set.seed(20261201)
starts_gap <- 0
for (s in 1:50) {
  fs <- factanal(r, factors = 1, rotation = "none", start = runif(4, 0.1, 0.9), control = control)
  starts_gap <- max(starts_gap, abs(fs$uniquenesses - u))
}
fa_default <- factanal(r, factors = 1, rotation = "none")
default_gap <- max(abs(fa_default$uniquenesses - u))

centred <- sweep(r, 2, colMeans(r))
sd_n <- sqrt(colSums(centred^2) / n)
L <- matrix(lambda * sd_n, ncol = 1)  # N x 1, return units
psi <- u * sd_n^2
Sigma <- L %*% t(L) + diag(psi)

rows <- character()
add <- function(block, portfolio, item, quantity, value)
  rows <<- c(rows, paste(block, portfolio, item, quantity, full(value), sep = ","))
for (i in seq_along(names)) {
  add("model", "-", names[i], "uniqueness", u[i])
  add("model", "-", names[i], "loading_standardized", lambda[i])
  add("model", "-", names[i], "sd_n", sd_n[i])
  add("model", "-", names[i], "loading", L[i, 1])
  add("model", "-", names[i], "specific_variance", psi[i])
}
add("fit", "-", "-", "objective", fa$criteria[["objective"]])
add("fit", "-", "-", "dof", fa$dof)
add("fit", "-", "-", "statistic", fa$STATISTIC)
add("fit", "-", "-", "n_obs", fa$n.obs)

portfolios <- list(equal = rep(0.25, 4), long_short = c(1, -1, 0.5, -0.5))
for (p in names(portfolios)) {
  w <- portfolios[[p]]
  x <- as.vector(t(L) %*% w)          # exposures L'w (k = 1, Phi = 1)
  systematic <- sum(x^2)              # w'LL'w
  specific <- sum(w^2 * psi)          # w'Psi w
  total <- systematic + specific
  stopifnot(abs(total - as.numeric(t(w) %*% Sigma %*% w)) < 1e-14 * total)
  sigma <- sqrt(total)
  common <- as.vector(L %*% x)        # (L L' w)_i
  sigma_w <- as.vector(Sigma %*% w)
  for (i in seq_along(names)) add("weights", p, names[i], "weight", w[i])
  add("portfolio", p, "-", "systematic_variance", systematic)
  add("portfolio", p, "-", "specific_variance", specific)
  add("portfolio", p, "-", "total_variance", total)
  add("portfolio", p, "-", "volatility", sigma)
  add("portfolio", p, "-", "systematic_share", systematic / total)
  add("portfolio", p, "-", "specific_volatility_contribution", specific / sigma)
  add("factor", p, "f1", "exposure", x)
  add("factor", p, "f1", "variance", x^2)
  add("factor", p, "f1", "volatility", x^2 / sigma)
  add("factor", p, "f1", "share", x^2 / total)
  for (i in seq_along(names)) {
    add("asset", p, names[i], "systematic_variance", w[i] * common[i])
    add("asset", p, names[i], "specific_variance", w[i]^2 * psi[i])
    add("asset", p, names[i], "variance", w[i] * sigma_w[i])
    add("asset", p, names[i], "marginal", sigma_w[i] / sigma)
    add("asset", p, names[i], "volatility", w[i] * sigma_w[i] / sigma)
    add("asset", p, names[i], "share", w[i] * sigma_w[i] / total)
  }
}

con <- file("eustock_risk_r.csv", "w")
writeLines(paste("#", c(
  "Portfolio risk in R's one-factor ML model of the EuStockMarkets log returns in eustock_returns.csv",
  "(r, 1859 x 4: DAX, SMI, CAC, FTSE). calls: factanal(r, factors = 1, rotation = 'none', control =",
  "list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000))); sd_n =",
  "sqrt(colSums(centred^2) / n) (denominator n, as our engine); L = loadings x sd_n, psi = uniquenesses x",
  "sd_n^2, Sigma = L L' + diag(psi). Per portfolio w: exposure L'w, systematic w'LL'w, specific",
  "w'diag(psi)w, Euler contributions w_i (Sigma w)_i / sigma by asset and (L'w)^2 / sigma by factor.",
  paste0("factanal converged = ", fa$converged, ", objective ", full(fa$criteria[["objective"]]),
         ", counts ", paste(fa$criteria[-1], collapse = "/"), "; no uniqueness at the 0.005 bound (smallest ",
         sprintf("%.4f", min(u)), ")."),
  paste0("max |u + lambda^2 - 1| = ", sprintf("%.2g", diag_gap), "; 50 fits from random starts runif(4, 0.1, 0.9)",
         " (set.seed(20261201)) agree on the uniquenesses to ", sprintf("%.2g", starts_gap), "; R's default control to ", sprintf("%.2g", default_gap), "."),
  "Loading sign as factanal returns it (arbitrary; risk figures other than the exposure do not depend on it).",
  "Long format: block (model, fit, weights, portfolio, factor, asset), portfolio, item, quantity, value.",
  tool, made)), con)
writeLines("block,portfolio,item,quantity,value", con)
writeLines(rows, con)
close(con)
cat(sprintf("diag gap %.3g, starts gap %.3g, default gap %.3g\n", diag_gap, starts_gap, default_gap))
