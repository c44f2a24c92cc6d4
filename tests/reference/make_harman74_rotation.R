# Writes R's varimax and promax rotations of the k = 4 maximum-likelihood loadings of
# Harman74.cor (the unrotated loadings of harman74_factanal_k4.csv), for the rotation tests.
# Run from this folder after make_harman74.R:  /usr/bin/Rscript make_harman74_rotation.R
#
# Why a tight eps: stats::varimax stops when its criterion grows by less than eps
# (relative); at R's default 1e-5 the loadings here stop up to 5e-5 from the optimum (the
# file header has the measured gap), so a comparison at that eps checks mainly that both
# sides stop at the same sweep. With eps = 1e-14 both sides run to the optimum and agree
# to rounding. Both are recorded.
#
# Why a re-implemented promax: stats::promax calls varimax(x) with the default eps = 1e-5
# and has no argument to change it. promax_steps() below is stats::promax's body line for
# line with eps passed to varimax; the script stops unless promax_steps(L, 4, 1e-5) is
# bitwise identical to stats::promax(L, 4). The "promax" rows use eps = 1e-14 through it;
# the "promax_default" rows are stats::promax(L, m = 4) itself.

full <- function(x) sprintf("%.17g", x)
stamp <- function(con, lines) {
  writeLines(paste("#", c(lines,
    paste0("tool: ", R.version.string, " (Debian r-base-core), stats ", packageVersion("stats"),
           ", LAPACK ", La_version()),
    paste0("generated: ", format(Sys.Date()), " by tests/reference/make_harman74_rotation.R"))), con)
}

# The unrotated fit: the same call and control as make_harman74.R.
control <- list(nstart = 1, lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000))
fit <- function(rotation) factanal(factors = 4, covmat = Harman74.cor, rotation = rotation, control = control)
f <- fit("none")
L <- unclass(f$loadings)
dimnames(L) <- NULL
stopifnot(f$converged, nrow(L) == 24, ncol(L) == 4)
# They are exactly the loadings written to harman74_factanal_k4.csv (same call, same machine).
k4 <- read.csv("harman74_factanal_k4.csv", comment.char = "#")
stopifnot(identical(unname(as.matrix(k4[, paste0("f", 1:4)])), L))

promax_steps <- function(x, m, eps) {  # stats::promax with the inner varimax's eps exposed
  xx <- varimax(x, eps = eps)
  x <- xx$loadings
  Q <- x * abs(x)^(m - 1)
  U <- lm.fit(x, Q)$coefficients
  d <- diag(solve(t(U) %*% U))
  U <- U %*% diag(sqrt(d))
  dimnames(U) <- NULL
  z <- x %*% U
  U <- xx$rotmat %*% U
  list(loadings = z, rotmat = U)
}
stopifnot(identical(unclass(promax_steps(L, 4, 1e-5)$loadings), unclass(promax(L, m = 4)$loadings)),
          identical(promax_steps(L, 4, 1e-5)$rotmat, promax(L, m = 4)$rotmat))

# Factor correlations as print.factanal computes them: tmat = solve(rotmat); tmat %*% t(tmat).
phi <- function(rotmat) { tmat <- solve(rotmat); tmat %*% t(tmat) }

solutions <- list(
  varimax = varimax(L, normalize = TRUE, eps = 1e-14),
  varimax_raw = varimax(L, normalize = FALSE, eps = 1e-14),
  varimax_default = varimax(L),
  promax = promax_steps(L, 4, 1e-14),
  promax_default = promax(L, m = 4))
fv <- fit("varimax")
fp <- fit("promax")

rows <- character()
add <- function(solution, what, M) {
  M <- unclass(M)
  for (i in seq_len(nrow(M))) for (j in seq_len(ncol(M)))
    rows <<- c(rows, paste(solution, what, i, j, full(M[i, j]), sep = ","))
}
add("none", "loadings", L)
for (s in names(solutions)) {
  add(s, "loadings", solutions[[s]]$loadings)
  add(s, "rotmat", solutions[[s]]$rotmat)
  if (startsWith(s, "promax")) add(s, "phi", phi(solutions[[s]]$rotmat))
}
add("factanal_varimax", "loadings", fv$loadings)
add("factanal_promax", "loadings", fp$loadings)

# Degenerate inputs, recorded in the header only (the tests build the same matrices from L):
# where R's promax stops, and that R's normalised varimax stops on a zero row.
degenerate <- list(
  "rows 1-3 only (fewer assets than factors)" = L[1:3, ],
  "column 3 set to zero" = { A <- L; A[, 3] <- 0; A },
  "column 3 = column 2 + 1e-9 * column 1" = { A <- L; A[, 3] <- A[, 2] + 1e-9 * A[, 1]; A },
  "column 3 times 1e-9" = { A <- L; A[, 3] <- 1e-9 * A[, 3]; A })
promax_failures <- character()
for (what in names(degenerate)) {
  message_text <- tryCatch({ promax(degenerate[[what]], m = 4); "no error" },
                           error = function(e) conditionMessage(e))
  stopifnot(message_text != "no error")
  promax_failures <- c(promax_failures, paste0("  ", what, ": ", message_text))
}
zero_row <- L
zero_row[6, ] <- 0
zero_row_error <- tryCatch({ varimax(zero_row); "no error" }, error = function(e) conditionMessage(e))
stopifnot(zero_row_error != "no error")

# How far the default eps stops from the tight optimum (for the header).
gap <- function(a, b) max(abs(unclass(solutions[[a]]$loadings) - unclass(solutions[[b]]$loadings)))

con <- file("harman74_varimax_k4.csv", "w")
stamp(con, c(
  "R's varimax and promax rotations of the unrotated k = 4 maximum-likelihood loadings L of Harman74.cor.",
  "L: factanal(factors = 4, covmat = Harman74.cor, rotation = \"none\", control = list(nstart = 1,",
  "lower = 0.005, opt = list(factr = 1, pgtol = 0, maxit = 10000)))$loadings, identical to harman74_factanal_k4.csv.",
  "Long format: one row per matrix entry; row and column are 1-based; row = variable in file order.",
  "solution none: L itself (matrix loadings).",
  "solution varimax: stats::varimax(L, normalize = TRUE, eps = 1e-14) (matrices loadings, rotmat).",
  "solution varimax_raw: stats::varimax(L, normalize = FALSE, eps = 1e-14).",
  "solution varimax_default: stats::varimax(L) (normalize = TRUE, eps = 1e-5).",
  "solution promax: stats::promax's steps with varimax(x, eps = 1e-14) (promax_steps in the script,",
  "  checked bitwise identical to stats::promax(L, m = 4) when given eps = 1e-5), m = 4.",
  "solution promax_default: stats::promax(L, m = 4) itself (its inner varimax uses eps = 1e-5).",
  "  promax matrices: loadings (the pattern), rotmat (varimax rotmat %*% U), phi = tmat %*% t(tmat)",
  "  with tmat = solve(rotmat), as print.factanal computes the factor correlations.",
  "solution factanal_varimax / factanal_promax: factanal(..., rotation = \"varimax\" / \"promax\") with the",
  "  same control: the default-eps rotation, then columns ordered by sum of squares (largest first)",
  "  and flipped to a positive column sum (factanal's sortLoadings).",
  sprintf("measured: default eps against eps = 1e-14: varimax loadings differ by up to %.1e, promax by %.1e.",
          gap("varimax_default", "varimax"), gap("promax_default", "promax")),
  "checked, not written: stats::promax(x, m = 4) stops with an error for each of these x built from L:",
  promax_failures,
  paste0("and stats::varimax(x) (normalize = TRUE) with row 6 of L set to zero (0/0 in the normalisation): ",
         zero_row_error)))
writeLines("solution,matrix,row,column,value", con)
writeLines(rows, con)
close(con)
