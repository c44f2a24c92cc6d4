# Writes R's factor scores (stats::factanal, scores = "Bartlett" and "regression") with the
# loadings, uniquenesses, centres and standard deviations behind them, for the factor-score
# tests. Run from this folder after make_eustock.R:  /usr/bin/Rscript make_factor_scores.R
#
# Two cases:
#   eustock_k1: the EuStockMarkets log returns of eustock_returns.csv (1859 x 4), one factor
#     (4 variables allow no more: ((p - k)^2 - p - k) / 2 must be >= 0). Scores of the first
#     50 dates only; centring and scaling use all 1859.
#   mtcars_k2:  datasets::mtcars (32 x 11, Henderson and Velleman 1981), two factors, rotation
#     "none"; the data are written too (the "data" rows), all 32 rows of scores.
#
# What factanal computes (stats 4.2.2, read from its source): zz <- scale(x, TRUE, TRUE)
# (centred on the column means, divided by sd() with n - 1), then
#   Bartlett:   t(solve(t(L / u) %*% L, t(L / u) %*% t(zz)))
#   regression: zz %*% solve(cv, L), cv the SAMPLE correlation matrix (not L L' + diag(u)).
# At a maximum-likelihood optimum the two regression forms agree: the stationarity condition
# for L, S Sigma^-1 L = L, gives S^-1 L = Sigma^-1 L (Lawley and Maxwell 1971). The script
# stops unless zz %*% solve(L L' + diag(u), L) matches factanal's regression scores to 1e-12
# and records the measured gap, so the model-implied (Thomson) scores may be checked against
# factanal's regression scores directly.

full <- function(x) sprintf("%.17g", x)
control <- list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000))

rows <- character()
add <- function(case, quantity, row, column, value)
  rows <<- c(rows, paste(case, quantity, row, column, full(value), sep = ","))
notes <- character()

one_case <- function(case, x, k, score_rows, labels, write_data) {
  fb <- factanal(x, factors = k, scores = "Bartlett", rotation = "none", control = control)
  fr <- factanal(x, factors = k, scores = "regression", rotation = "none", control = control)
  stopifnot(fb$converged, fr$converged, identical(unclass(fb$loadings), unclass(fr$loadings)),
            identical(fb$uniquenesses, fr$uniquenesses))
  L <- unclass(fb$loadings)
  u <- fb$uniquenesses
  zz <- scale(x, TRUE, TRUE)
  centre <- attr(zz, "scaled:center")
  sds <- attr(zz, "scaled:scale")
  stopifnot(max(abs(sds - apply(x, 2, sd))) == 0, max(abs(centre - colMeans(x))) == 0)
  thomson <- zz %*% solve(L %*% t(L) + diag(u), L)
  gap <- max(abs(thomson - fr$scores))
  stopifnot(gap < 1e-12)
  sample_gap <- max(abs(cor(x) - (L %*% t(L) + diag(u))))
  notes <<- c(notes, sprintf(
    "%s: factanal(x, factors = %d, rotation = \"none\", control as below), n = %d, p = %d, objective %.10g, smallest uniqueness %.4f; |thomson - factanal regression| max %.1e (while |cor(x) - (L L' + diag(u))| max %.3g)",
    case, k, nrow(x), ncol(x), fb$criteria["objective"], min(u), gap, sample_gap))
  vars <- colnames(x)
  for (i in seq_along(vars)) {
    for (j in seq_len(k)) add(case, "loading", vars[i], j, L[i, j])
    add(case, "uniqueness", vars[i], "", u[i])
    add(case, "center", vars[i], "", centre[i])
    add(case, "sd", vars[i], "", sds[i])
  }
  for (t in score_rows) for (j in seq_len(k)) {
    add(case, "bartlett", labels[t], j, fb$scores[t, j])
    add(case, "regression", labels[t], j, fr$scores[t, j])
  }
  if (write_data) for (t in seq_len(nrow(x))) for (i in seq_along(vars)) add(case, "data", labels[t], vars[i], x[t, i])
}

returns <- read.csv("eustock_returns.csv", comment.char = "#")
eustock <- as.matrix(returns[, -1])
stopifnot(identical(dim(eustock), c(1859L, 4L)), identical(colnames(eustock), c("DAX", "SMI", "CAC", "FTSE")))
one_case("eustock_k1", eustock, 1, 1:50, returns$date, FALSE)

cars <- as.matrix(mtcars)
stopifnot(identical(dim(cars), c(32L, 11L)))
one_case("mtcars_k2", cars, 2, 1:32, paste0("car", seq_len(32)), TRUE)

con <- file("factor_scores_r.csv", "w")
writeLines(paste("#", c(
  "Factor scores by R stats::factanal(x, factors = k, scores = \"Bartlett\" / \"regression\", rotation = \"none\",",
  "control = list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000))).",
  "eustock_k1: x = the returns of eustock_returns.csv (all 1859 rows fitted and standardized); scores of rows 1-50,",
  "labelled by date. mtcars_k2: x = as.matrix(datasets::mtcars); rows labelled car1..car32 in R's order, data rows",
  "hold x itself. Scores are on the standardized data: scale(x) centres on colMeans and divides by sd() (n - 1).",
  "quantity loading: row = variable, column = factor; uniqueness, center, sd: row = variable; bartlett,",
  "regression: row = observation, column = factor; data: row = observation, column = variable.",
  "factanal's regression scores use the sample correlation matrix; see make_factor_scores.R for why they equal the",
  "model-implied (Thomson) scores at the ML optimum, measured:",
  notes,
  paste0("tool: ", R.version.string, " (Debian r-base-core), stats ", packageVersion("stats"),
         ", LAPACK ", La_version()),
  paste0("generated: ", format(Sys.Date()), " by tests/reference/make_factor_scores.R"))), con)
writeLines("case,quantity,row,column,value", con)
writeLines(rows, con)
close(con)
