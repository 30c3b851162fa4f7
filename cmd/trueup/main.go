// Command trueup forecasts every node of a store × category × region sales
// structure and reconciles the forecasts so that every total equals the sum
// of its parts. Run "trueup help" for the commands.
package main

import (
	"errors"
	"fmt"
	"os"
	"os/signal"
	"strings"
	"syscall"

	"trueup/inputerr"
	"trueup/tableio"
)

// Exit statuses.
const (
	exitOK    = 0
	exitOther = 1
	exitInput = 2 // usage or input error
)

func main() {
	go removeTempsOnInterrupt()
	os.Exit(run(os.Args[1:]))
}

// removeTempsOnInterrupt waits for Ctrl-C or a termination signal, removes
// the temporary files of writes in progress and exits with the shell's
// status for the signal. Results are renamed into place only when complete,
// so an interrupted run leaves the finished files and no partial one.
func removeTempsOnInterrupt() {
	sig := make(chan os.Signal, 1)
	signal.Notify(sig, os.Interrupt, syscall.SIGTERM)
	s := <-sig
	tableio.RemovePending()
	fmt.Fprintln(os.Stderr, "trueup: interrupted; no partial files left")
	code := 130
	if s == syscall.SIGTERM {
		code = 143
	}
	os.Exit(code)
}

// optionFlags maps the library's option names, which input errors carry,
// to the flags that set them, so a message can name the flag to change.
var optionFlags = map[string]string{
	"Source": "--time/--value", "Chains": "--nest", "Period": "--period", "Horizon": "--horizon",
	"Levels": "--levels", "Family": "--family", "Model": "--model", "Transform": "--transform",
	"Constant": "--constant", "Method": "--method", "Cov": "--cov", "At": "--at",
	"Nonnegative": "--nonnegative", "Paths": "--paths", "History": "--history",
	"Formats": "--format", "Out": "--out", "SumDuplicates": "--sum-duplicates", "Grain": "--grain",
	"Origins": "--origins", "Every": "--every", "Compare": "--compare",
	"From": "--from",
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
	if flag := optionFlags[inputerr.OptionOf(err)]; flag != "" && !strings.Contains(err.Error(), flag) {
		fmt.Fprintf(os.Stderr, "trueup: %s: %v\n", flag, err)
	} else {
		fmt.Fprintln(os.Stderr, "trueup:", err)
	}
	var ue *usageError
	// Cobra reports an unknown command as a plain error.
	if inputerr.Is(err) || errors.As(err, &ue) || strings.HasPrefix(err.Error(), "unknown command") {
		return exitInput
	}
	return exitOther
}
