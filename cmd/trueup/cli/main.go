// Package cli is trueup's command line: every command, its flags, the
// summaries it prints and the exit statuses. cmd/trueup runs it as the
// trueup program; another program (dist/beam) runs the same commands with
// a different fit stage through Main and Config.
package cli

import (
	"errors"
	"flag"
	"fmt"
	"os"
	"os/signal"
	"strings"
	"sync"
	"syscall"

	"github.com/spf13/cobra"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/inputerr"
	"trueup/internal/crash"
	"trueup/internal/membudget"
	"trueup/tableio"
)

// Exit statuses.
const (
	exitOK    = 0
	exitOther = 1
	exitInput = 2 // usage or input error
)

// Config is what a program running these commands may change; the zero
// value is the trueup program.
type Config struct {
	// Name is the program's name in help and messages' usage lines; ""
	// means trueup (and trueup's examples).
	Name string
	// Fitter makes the fit stage of forecast, backtest and demo from
	// --workers; nil means engine.Local, this process's pool.
	Fitter func(workers int) engine.Fitter
	// Commands names the commands offered; nil means all of them.
	Commands []string
	// Flags, when non-nil, are added to every command as hidden flags
	// (a distributed fit stage's own options).
	Flags *flag.FlagSet
}

// Main runs the command line args (without the program name) under cfg
// and exits the process with its status, after releasing the output
// folders; SIGINT, SIGTERM and SIGHUP stop it cleanly (see exitOnSignal).
func Main(args []string, cfg Config) {
	sig := make(chan os.Signal, 1)
	signal.Notify(sig, syscall.SIGHUP, syscall.SIGINT, syscall.SIGTERM)
	go exitOnSignal(sig)
	membudget.LimitRuntime()
	if cfg.Fitter != nil {
		newFitter = cfg.Fitter
	}
	code := execute(newRootCmdWith(cfg), args)
	exitMu.Lock() // a signal being handled keeps it: that exit wins
	output.Release()
	os.Exit(code)
}

// newFitter makes the fit stage from --workers (Config.Fitter).
var newFitter = func(workers int) engine.Fitter { return engine.Local{Workers: workers} }

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
	"Source": "--time/--value", "Chains": "--hierarchy", "Period": "--season-length", "Horizon": "--horizon",
	"Levels": "--intervals", "Family": "--family", "Model": "--model", "Transform": "--transform",
	"Constant": "--constant", "Method": "--method", "Cov": "--cov", "At": "--at",
	"Nonnegative": "--nonnegative", "Paths": "--paths", "History": "--history",
	"Formats": "--format", "Out": "--out", "SumDuplicates": "--sum-duplicates", "Grain": "--grain",
	"Origins": "--origins", "Every": "--every", "Compare": "--compare", "Calibrate": "--calibrate", "Intervals": "--interval-method",
	"From": "--from", "Until": "--until", "TimeKind": "--integer-time", "PlanGrains": "--plan-grain", "Locks": "--lock",
}

// optionHints say, for an input error that an option would resolve, what
// to add to the command line; the message is then printed as it is, with
// the hint after it.
var optionHints = map[string]string{
	"SumDuplicates": "add --sum-duplicates to add such rows together",
}

// run executes the command line and maps errors to exit statuses: input and
// usage errors exit 2, anything else 1. A panic (a bug), in this goroutine
// or carried from another one as a *crash.Panic, exits 1 with one line.
func run(args []string) int {
	return execute(newRootCmd(), args)
}

// execute runs root on args and returns the exit status (see run).
func execute(root *cobra.Command, args []string) (code int) {
	defer func() {
		if r := recover(); r != nil {
			code = crashed(crash.From(r))
		}
	}()
	root.SetArgs(args)
	err := root.Execute()
	if err == nil {
		return exitOK
	}
	var p *crash.Panic
	if errors.As(err, &p) {
		return crashed(p)
	}
	option := inputerr.OptionOf(err)
	if hint := optionHints[option]; hint != "" {
		fmt.Fprintf(os.Stderr, "trueup: %s; %s\n", escapeUnprintable(err.Error()), hint)
	} else if flag := optionFlags[option]; flag != "" && !strings.Contains(err.Error(), flag) {
		fmt.Fprintf(os.Stderr, "trueup: %s: %s\n", flag, escapeUnprintable(err.Error()))
	} else {
		fmt.Fprintln(os.Stderr, "trueup:", escapeUnprintable(err.Error()))
	}
	var ue *usageError
	// Cobra reports an unknown command as a plain error.
	if inputerr.Is(err) || errors.As(err, &ue) || strings.HasPrefix(err.Error(), "unknown command") {
		return exitInput
	}
	return exitOther
}

// debugEnv names the environment variable that, set to 1, adds the stack
// of a crash to its message.
const debugEnv = "TRUEUP_DEBUG"

// crashed prints a bug's one-line message, with its stack under
// TRUEUP_DEBUG=1, and returns exit status 1.
func crashed(p *crash.Panic) int {
	fmt.Fprintf(os.Stderr, "trueup: internal error (a bug in trueup, not a problem with your input): %v. "+
		"Please report it with the command line; %s=1 adds where it happened.\n", p.Value, debugEnv)
	if os.Getenv(debugEnv) == "1" {
		os.Stderr.Write(p.Stack)
	}
	return exitOther
}
