// Command trueup forecasts every node of a store × category × region sales
// structure and reconciles the forecasts so that every total equals the sum
// of its parts. Run "trueup help" for the commands.
package main

import (
	"errors"
	"fmt"
	"os"
	"strings"

	"trueup/internal/inputerr"
)

// Exit statuses.
const (
	exitOK    = 0
	exitOther = 1
	exitInput = 2 // usage or input error
)

func main() {
	os.Exit(run(os.Args[1:]))
}

// run executes the command line and maps errors to exit statuses: input and
// usage errors exit 2, anything else 1.
func run(args []string) int {
	root := newRootCmd()
	root.SetArgs(args)
	err := root.Execute()
	if err == nil {
		return exitOK
	}
	fmt.Fprintln(os.Stderr, "trueup:", err)
	var ue *usageError
	// Cobra reports an unknown command as a plain error.
	if inputerr.Is(err) || errors.As(err, &ue) || strings.HasPrefix(err.Error(), "unknown command") {
		return exitInput
	}
	return exitOther
}
