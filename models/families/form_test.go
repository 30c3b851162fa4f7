package families

import (
	"math"
	"testing"

	"trueup/fixtures/reference"
	"trueup/models"
)

// TestEveryPrintedFormIsAcceptedBack fits every registered family under
// every transform to the airline series (Box & Jenkins' monthly airline
// passengers, fixtures/reference/arima/airpass.csv), reads the printed
// form (Model.Spec, the models table's model column) back as a fixed
// model, fits that to the same series, and checks that it prints the same
// form and forecasts the same (to 1e-3 relative: a Box–Cox λ is printed
// to four significant digits).
func TestEveryPrintedFormIsAcceptedBack(t *testing.T) {
	y, err := reference.Series("arima/airpass.csv")
	if err != nil {
		t.Fatal(err)
	}
	opt := models.FitOptions{Period: 12, Horizon: 12}
	for _, name := range Registry().Names() {
		for _, tr := range []string{"none", "log", "boxcox"} {
			spec := Spec{Family: name, Transform: tr}
			fam, err := spec.Resolve()
			if err != nil {
				continue // a combination this family refuses (auto with a transform)
			}
			first, err := fam.Fit(y, opt)
			if err != nil {
				t.Errorf("%s %s: %v", name, tr, err)
				continue
			}
			printed := first.Spec()
			t.Logf("%s %s: %s", name, tr, printed)
			back, err := Spec{Form: printed}.Resolve()
			if err != nil {
				t.Errorf("%s %s: printed form %q is not accepted back: %v", name, tr, printed, err)
				continue
			}
			again, err := back.Fit(y, opt)
			if err != nil {
				t.Errorf("%s %s: %q: %v", name, tr, printed, err)
				continue
			}
			if again.Spec() != printed {
				t.Errorf("%s %s: %q read back prints %q", name, tr, printed, again.Spec())
			}
			if again.Family() != first.Family() {
				t.Errorf("%s %s: %q read back is family %q, was %q", name, tr, printed, again.Family(), first.Family())
			}
			a, _ := first.Forecast(12)
			b, _ := again.Forecast(12)
			for k := range a {
				if math.Abs(a[k]-b[k]) > 1e-3*math.Abs(a[k]) {
					t.Errorf("%s %s: %q step %d: forecast %v read back, %v first", name, tr, printed, k+1, b[k], a[k])
					break
				}
			}
		}
	}
}

// TestMedianAndMeanFormsAreAcceptedBack reads back a median combination
// of three members (one on Box–Cox) and the mean method, which the
// automatic choice and the fallbacks print but the registry does not
// list, and checks that "+ drift" may come before or after "m=".
func TestMedianAndMeanFormsAreAcceptedBack(t *testing.T) {
	y, err := reference.Series("arima/airpass.csv")
	if err != nil {
		t.Fatal(err)
	}
	opt := models.FitOptions{Period: 12, Horizon: 12}
	for _, form := range []string{
		"median of Theta, multiplicative seasonal m=12; ETS(M,A,M); ARIMA(0,1,1)(0,1,1) m=12 on Box-Cox(lambda=-0.2947)",
		"mean",
	} {
		fam, err := Spec{Form: form}.Resolve()
		if err != nil {
			t.Errorf("%q: %v", form, err)
			continue
		}
		fit, err := fam.Fit(y, opt)
		if err != nil {
			t.Errorf("%q: %v", form, err)
			continue
		}
		if fit.Spec() != form {
			t.Errorf("%q read back prints %q", form, fit.Spec())
		}
	}
	a, errA := Spec{Form: "ARIMA(1,0,0)(1,1,0) + drift m=12"}.Resolve()
	b, errB := Spec{Form: "ARIMA(1,0,0)(1,1,0) m=12 + drift"}.Resolve()
	if errA != nil || errB != nil {
		t.Fatalf("drift before or after m=: %v, %v", errA, errB)
	}
	fa, _ := a.Fit(y, opt)
	fb, _ := b.Fit(y, opt)
	if fa == nil || fb == nil || fa.Spec() != fb.Spec() {
		t.Errorf("the two orders give different models")
	}
}
