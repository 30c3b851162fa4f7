package families

import (
	"testing"

	"trueup/inputerr"
)

// FuzzSpecResolve feeds arbitrary --model forms (and families and
// transforms) to Spec.Resolve, which runs the ARIMA and ETS form parsers:
// no input may panic, and every failure is an input error.
func FuzzSpecResolve(f *testing.F) {
	for _, s := range [][3]string{
		{"", "ARIMA(0,1,1)(0,1,1) m=12", ""}, {"", "ARIMA(1,1,0) + drift", "log"}, {"ets", "ETS(M,Ad,M)", ""},
		{"arima", "ETS(A,N,N)", ""}, {"", "ARIMA(0,1)", ""}, {"theta", "", "boxcox"}, {"auto", "", "sqrt"},
		{"", "ARIMA(99999999999,1,1)", ""}, {"", "ETS(A,N,M)", ""},
	} {
		f.Add(s[0], s[1], s[2], false)
	}
	f.Fuzz(func(t *testing.T, family, form, transform string, constant bool) {
		_, err := Spec{Family: family, Form: form, Transform: transform, Constant: constant}.Resolve()
		if err != nil && !inputerr.Is(err) {
			t.Fatalf("%q %q %q: a failure that is not an input error: %v", family, form, transform, err)
		}
	})
}
