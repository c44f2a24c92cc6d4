# Upper-tail chi-square probabilities from R for a grid of degrees of freedom and points.
# Run from this folder:  /usr/bin/Rscript make_chi_square_sf.R
# Then run make_chi_square_sf.py (scipy cross-check and the combined chi_square_sf.csv).

full <- function(x) sprintf("%.17g", x)
dfs <- c(1, 2, 3, 5, 10, 17.5, 100, 252, 1000)
probs <- c(0.001, 0.1, 0.5, 0.9, 0.999, 1 - 1e-10)
prob_labels <- c("0.001", "0.1", "0.5", "0.9", "0.999", "1-1e-10")

rows <- character()
add <- function(df, x, label) {
  rows <<- c(rows, paste(full(df), full(x), label, full(pchisq(x, df, lower.tail = FALSE)), sep = ","))
}
for (df in dfs) for (j in seq_along(probs)) add(df, qchisq(probs[j], df), paste0("quantile ", prob_labels[j]))
# Edges: x = 0 (probability 1) and far tails (tiny but representable, and underflow to 0).
for (df in c(1, 2, 17.5, 1000)) add(df, 0, "zero")
add(1, 600, "far tail")
add(1, 1e4, "far tail (underflows)")
add(10, 500, "far tail")
add(252, 2000, "far tail")
add(1000, 3000, "far tail")
add(1000, 1e6, "far tail (underflows)")

con <- file("chi_square_sf_r.csv", "w")
writeLines(paste("#", c(
  "Upper-tail chi-square probabilities P(X > x), X ~ chi-square(df), from R.",
  "calls: x = qchisq(p, df) for the 'quantile p' rows, then pchisq(x, df, lower.tail = FALSE);",
  "values written with sprintf('%.17g').",
  paste0("tool: ", R.version.string, " (Debian r-base-core), stats ", packageVersion("stats")),
  paste0("generated: ", format(Sys.Date()), " by tests/reference/make_chi_square_sf.R"))), con)
writeLines("df,x,point,r_pchisq_upper", con)
writeLines(rows, con)
close(con)
