// Package tableio reads the long sales table trueup forecasts from
// (Parquet, CSV or Arrow IPC) and writes result tables (Parquet, CSV,
// Arrow IPC), always through a temporary file renamed into place so that
// no reader ever sees a half-written file. It also parses the period
// labels trueup accepts.
//
// The directory is io/; the package is named tableio so that it does not
// shadow the standard library's io package in importers.
package tableio
