"""Times the same automatic ETS search with statsmodels' ETSModel.

Fits the 15 forms models/ets considers for strictly positive monthly data
(error A or M; trend N, A or Ad; seasonality N, A or M; without (A,.,M)) to
the first 96 months of R's AirPassengers and keeps the smallest AICc, as
ets.Auto does. Prints the median wall time of 3 runs in milliseconds on the
last line. Debian python3-statsmodels (version printed first).

Run: /usr/bin/python3 bench/ets/statsmodels_auto.py   (from the repository root)
"""
import statistics
import time
import warnings

import statsmodels
from statsmodels.tsa.exponential_smoothing.ets import ETSModel


def load():
    with open("fixtures/reference/ets/data/AirPassengers.csv") as f:
        lines = [ln.strip() for ln in f if not ln.startswith("#")]
    return [float(v) for v in lines[1:]][:96]


def search(y):
    best = None
    for err in ("add", "mul"):
        for seas in (None, "add", "mul"):
            if err == "add" and seas == "mul":
                continue
            for trend, damped in ((None, False), ("add", False), ("add", True)):
                m = ETSModel(y, error=err, trend=trend, damped_trend=damped,
                             seasonal=seas, seasonal_periods=12 if seas else None)
                r = m.fit(disp=False)
                if best is None or r.aicc < best:
                    best = r.aicc
    return best


def main():
    warnings.simplefilter("ignore")
    y = load()
    print("statsmodels", statsmodels.__version__)
    times = []
    for _ in range(3):
        t0 = time.perf_counter()
        search(y)
        times.append((time.perf_counter() - t0) * 1000)
    print(f"{statistics.median(times):.1f}")


if __name__ == "__main__":
    main()
