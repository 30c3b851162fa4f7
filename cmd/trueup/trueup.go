// Command trueup forecasts every node of a store × category × region sales
// structure and reconciles the forecasts so that every total equals the sum
// of its parts. Run "trueup help" for the commands; they live in package
// cli, which dist/beam runs with a distributed fit stage.
package main

import (
	"os"

	"trueup/cmd/trueup/cli"
)

func main() { cli.Main(os.Args[1:], cli.Config{}) }
