package inputerr_test

import (
	"errors"
	"fmt"
	"io/fs"
	"os"
	"testing"

	"trueup/inputerr"
	"trueup/tableio"
)

func TestWrappedCauseIsKept(t *testing.T) {
	_, err := tableio.Read("no-such-file.csv", tableio.ReadOptions{Time: "month", Value: "sales"})
	if !errors.Is(err, fs.ErrNotExist) {
		t.Fatalf("errors.Is(err, fs.ErrNotExist) = false for %v", err)
	}
	var ie *inputerr.Error
	if !errors.As(err, &ie) || ie.File != "no-such-file.csv" {
		t.Fatalf("want an *inputerr.Error naming the file, got %#v", err)
	}
}

func TestPositionFormatting(t *testing.T) {
	err := &inputerr.Error{File: "sales.csv", Line: 14, Column: "units", Msg: "not a number", Err: os.ErrInvalid}
	want := `sales.csv line 14 column "units": not a number: invalid argument`
	if err.Error() != want {
		t.Fatalf("got %q, want %q", err.Error(), want)
	}
	if inputerr.OptionOf(fmt.Errorf("ctx: %w", inputerr.ForOption("Horizon", "too long"))) != "Horizon" {
		t.Fatal("OptionOf lost the option through wrapping")
	}
}
