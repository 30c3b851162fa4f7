# Times statsmodels' SARIMAX (exact ML by Kalman filter) on the airline
# model for log AirPassengers; prints the median milliseconds per fit.
import csv
import math
import statistics
import sys
import time
import warnings

from statsmodels.tsa.statespace.sarimax import SARIMAX

warnings.simplefilter("ignore")
reps = int(sys.argv[1]) if len(sys.argv) > 1 else 10
with open("fixtures/reference/arima/airpass.csv") as f:
    y = [math.log(float(r["value"])) for r in csv.DictReader(f)]


def fit():
    return SARIMAX(y, order=(0, 1, 1), seasonal_order=(0, 1, 1, 12)).fit(disp=False)


fit()
ms = []
for _ in range(reps):
    t0 = time.perf_counter()
    fit()
    ms.append((time.perf_counter() - t0) * 1000)
print("%.3f" % statistics.median(ms))
