package output

// Exported for the tests of package output_test.
var (
	ForecastSetTables = setTables[forecastSet]
	BacktestSetTables = setTables[backtestSet]
)
