package arima

// Name is the registry name of the ARIMA family.
const Name = "arima"
