package cli

import "testing"

func TestGroupedThousands(t *testing.T) {
	for x, want := range map[float64]string{
		0: "0", 999.4: "999", 1000: "1,000", 3813724.2: "3,813,724", -52.5: "-53", -0.4: "0", 1234567890: "1,234,567,890",
	} {
		if got := grouped(x); got != want {
			t.Errorf("grouped(%v) = %q, want %q", x, got, want)
		}
	}
}
