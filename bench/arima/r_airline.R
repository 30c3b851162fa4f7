# Times R's stats::arima (exact ML, method "CSS-ML") on the airline model
# for log AirPassengers; prints the median milliseconds per fit.
args <- commandArgs(trailingOnly = TRUE)
reps <- if (length(args) > 0) as.integer(args[1]) else 50
x <- log(read.csv("fixtures/reference/arima/airpass.csv")$value)
x <- ts(x, frequency = 12)
fit1 <- function() arima(x, order = c(0, 1, 1), seasonal = list(order = c(0, 1, 1), period = 12))
invisible(fit1())
ms <- numeric(reps)
for (i in seq_len(reps)) ms[i] <- system.time(fit1())[["elapsed"]] * 1000
cat(sprintf("%.3f\n", median(ms)))
