# Writes daily log returns of R's datasets::EuStockMarkets (DAX, SMI, CAC, FTSE closing
# prices, 1860 days, 1991-1998) and R's eigen-decompositions of their covariance and
# correlation matrices. Run from this folder:  /usr/bin/Rscript make_eustock.R
# Then run make_eustock_pca.py (numpy cross-check and the combined reference file).

full <- function(x) sprintf("%.17g", x)
tool <- paste0("tool: ", R.version.string, " (Debian r-base-core), stats ", packageVersion("stats"),
               ", LAPACK ", La_version())
made <- paste0("generated: ", format(Sys.Date()), " by tests/reference/make_eustock.R")

x <- EuStockMarkets
stopifnot(identical(dim(x), c(1860L, 4L)))
r <- diff(log(x))  # 1859 x 4, log return from day i to day i + 1
stopifnot(identical(dim(r), c(1859L, 4L)), all(is.finite(r)))

# The series carries no calendar dates (a ts with frequency 260). Our CSV reader needs ISO
# dates, so prices get positional labels: Monday to Friday, no holidays, price 1 on
# 1991-07-01; return i is labelled with the day of its closing price i + 1 (1991-07-02 first).
days <- seq(as.Date("1991-07-01"), by = "day", length.out = 3000)
days <- days[as.POSIXlt(days)$wday %in% 1:5][1:1860]
dates <- format(days[-1])

con <- file("eustock_returns.csv", "w")
writeLines(paste("#", c(
  "Daily log returns of R's datasets::EuStockMarkets closing prices (DAX, SMI, CAC, FTSE).",
  "call: r <- diff(log(EuStockMarkets)); values written with sprintf('%.17g') (exact round trip).",
  "DATES ARE POSITIONAL LABELS, NOT THE TRUE TRADING DATES: the series has no calendar (ts,",
  "start c(1991, 130), frequency 260). Prices are labelled Monday-Friday from 1991-07-01 with no",
  "holidays; each return carries the label of its closing day (first 1991-07-02, 1859 rows).",
  tool, made)), con)
writeLines(paste(c("date", colnames(r)), collapse = ","), con)
for (i in seq_len(nrow(r))) writeLines(paste(c(dates[i], full(r[i, ])), collapse = ","), con)
close(con)

# R's eigen() on the symmetric matrix (LAPACK dsyevr); cov/cor use denominator n - 1.
rows <- character()
add <- function(label, m) {
  e <- eigen(m, symmetric = TRUE)
  for (j in seq_along(e$values))
    rows <<- c(rows, paste(label, j, full(e$values[j]), paste(full(e$vectors[, j]), collapse = ","), sep = ","))
}
add("R eigen(cov(r)),covariance,n-1", cov(r))
add("R eigen(cor(r)),correlation,none", cor(r))
con <- file("eustock_pca_r.csv", "w")
writeLines(paste("#", c(
  "Eigen-decompositions by R of the EuStockMarkets log returns in eustock_returns.csv (r, 1859 x 4).",
  "calls: eigen(cov(r), symmetric = TRUE) and eigen(cor(r), symmetric = TRUE); cov() divides by n - 1.",
  "One row per eigenpair, largest eigenvalue first; vector entries in the column order DAX, SMI, CAC,",
  "FTSE, unit length, sign as returned by LAPACK dsyevr (arbitrary: compare up to a sign flip).",
  tool, made)), con)
writeLines(paste(c("source", "matrix", "denominator", "component", "eigenvalue", colnames(r)), collapse = ","), con)
writeLines(rows, con)
close(con)
