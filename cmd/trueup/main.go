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
	"sync"
	"syscall"

	"trueup/engine/output"
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
	sig := make(chan os.Signal, 1)
	signal.Notify(sig, syscall.SIGHUP, syscall.SIGINT, syscall.SIGTERM)
	go exitOnSignal(sig)
	code := run(os.Args[1:])
	exitMu.Lock() // a signal being handled keeps it: that exit wins
	os.Exit(code)
}

// exitMu is taken by whichever of the run and the signal handler exits
// first, so an interrupted run exits with the signal's status, never with
// the error its interrupted write ran into.
var exitMu sync.Mutex

// signalStatus is the shell's exit status for each signal handled:
// 128 + the signal number.
var signalStatus = map[os.Signal]int{syscall.SIGHUP: 129, syscall.SIGINT: 130, syscall.SIGTERM: 143}

// exitOnSignal waits for SIGINT, SIGTERM or SIGHUP (main subscribes to
// them first thing; before that, in the runtime's start-up, a signal ends
// the process with its default action, having written nothing), stops the output set in
// progress (its staging folder is removed, the output folder is left as it
// was) and temporary files, says what state the output is in and exits
// with the signal's status.
func exitOnSignal(sig <-chan os.Signal) {
	s := <-sig
	exitMu.Lock()
	done := output.Interrupt()
	tableio.RemovePending()
	fmt.Fprintln(os.Stderr, interruptMessage(s, done))
	os.Exit(signalStatus[s])
}

// interruptMessage is the one line printed on a signal: which signal, and
// the state of the output folders.
func interruptMessage(s os.Signal, done []string) string {
	name := map[os.Signal]string{syscall.SIGHUP: "SIGHUP", syscall.SIGINT: "SIGINT", syscall.SIGTERM: "SIGTERM"}[s]
	if len(done) == 0 {
		return "trueup: stopped by " + name + " before new results were put in place; the output folder keeps its previous set"
	}
	return "trueup: stopped by " + name + " after the new results were complete in " + strings.Join(done, ", ")
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
	"From": "--from", "Until": "--until", "TimeKind": "--integer-time",
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
