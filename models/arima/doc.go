// Package arima fits seasonal ARIMA models by exact Gaussian maximum
// likelihood and chooses their orders automatically.
//
// The model (see Spec) is φ(B)Φ(B^m)(1−B)^d(1−B^m)^D (y_t − x_tᵀβ) =
// θ(B)Θ(B^m)ε_t with the textbook signs φ(B) = 1 − φ_1B − … and θ(B) =
// 1 + θ_1B + …; under them the airline model on log Series G has
// θ_1 ≈ −0.40, Θ_1 ≈ −0.56 (Box, Jenkins & Reinsel). The regression part
// carries a mean (d+D = 0), a drift (d+D = 1), Fourier pairs and external
// regressors (Options.XReg).
//
// Estimation (FitOrder) differences the (optionally log-transformed)
// series and maximises the exact likelihood of the differenced series,
// computed by a Kalman filter on the state-space form of Gardner, Harvey &
// Phillips (1980) with the stationary initial covariance and σ²
// concentrated out; during optimisation the Chandrasekhar recursions
// (Morf, Sidhu & Kailath 1974) make each likelihood evaluation O(n·r).
// Starting values come from conditional sum of squares; BFGS from gonum's
// optimize package does the search, with Nelder–Mead as fallback, on the
// partial-autocorrelation parameterisation of Jones (1980), so every
// iterate is stationary and invertible.
//
// Because the likelihood is that of the differenced series, it differs
// slightly from R's stats::arima for differenced models (by up to about
// 0.01 with a seasonal difference on the reference series), since R
// approximates a diffuse prior on the differenced-away states by a large
// finite variance; without differencing the two agree to rounding. The
// tests hold the difference within 0.05.
//
// Auto chooses the differencing and orders (STL seasonal strength, KPSS,
// the stepwise AICc search of Hyndman & Khandakar 2008, Fourier terms for
// periods over 24) and falls back to simpler models, with a Warning, when
// a series is constant, short or awkward. Family wraps Auto as a
// models.Family under the name "arima".
package arima
