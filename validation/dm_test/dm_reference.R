# Reference values for the standard error of a mean loss difference (libseq::pipeline::detail::
# difference_standard_error), from R `forecast::dm.test` (Diebold & Mariano 1995, with the small-sample correction
# of Harvey, Leybourne & Newbold 1997). Data: the Nile annual flow series of R `datasets` (validation/datasets/nile.csv,
# the same numbers), two simple forecasts of year t from the years before it:
#   e1: naive forecast (the previous year),   e2: the mean of the previous 10 years,   t = 11..100.
# Absolute errors (power = 1); horizons h = 1, 3, 6 (autocovariances up to lag h - 1, rectangular window).
# dm.test multiplies mean(d)/sqrt(var) by k = sqrt((n + 1 - 2h + h(h - 1)/n)/n); we store that statistic, k and
# mean(d), so that the test can recover the standard error sqrt(var) = mean(d) * k / statistic.
# Run: Rscript validation/dm_test/dm_reference.R > validation/dm_test/dm_reference.csv
suppressMessages(library(forecast))
y <- as.numeric(datasets::Nile)
t <- 11:100
e1 <- y[t] - y[t - 1]
e2 <- sapply(t, function(i) y[i] - mean(y[(i - 10):(i - 1)]))
cat("h,n,mean_d,statistic,k\n")
for (h in c(1, 3, 6)) {
  r <- dm.test(e1, e2, h = h, power = 1)
  n <- length(e1)
  k <- sqrt((n + 1 - 2 * h + (h / n) * (h - 1)) / n)
  d <- abs(e1) - abs(e2)
  cat(sprintf("%d,%d,%.17g,%.17g,%.17g\n", h, n, mean(d), unname(r$statistic), k))
}
