// Package numeric holds numerical routines that several trueup packages
// share: polynomial products, the partial-autocorrelation reparameterisation
// of stationary autoregressions, a discrete Lyapunov solver, an exact
// Kalman-filter likelihood for ARMA processes, the KPSS stationarity test,
// the STL seasonal-trend decomposition, sample ACF and PACF and the
// Ljung–Box portmanteau test.
//
// Routines work on plain []float64 (matrices row-major) and take
// caller-owned destination slices or reusable workspaces in their hot loops,
// in the manner of gonum's floats package.
package numeric
