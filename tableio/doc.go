// Package tableio reads the long sales table trueup forecasts from
// (Parquet, CSV or Arrow IPC) and writes result tables (Parquet, CSV,
// Arrow IPC), always through a temporary file renamed into place so that
// no reader ever sees a half-written file. It also parses the period
// labels trueup accepts and defines the grains (day, week, month, quarter,
// year, and a plain step index).
//
// Parquet is read and written with arrow-go's parquet/file column chunk
// readers and writers, not its Arrow layer (pqarrow), which would bring
// gRPC and protobuf into every build through Arrow Flight.
//
// The package is named tableio so that it does not shadow the standard
// library's io package in importers.
package tableio
