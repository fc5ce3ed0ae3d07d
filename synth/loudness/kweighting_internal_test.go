package loudness

import (
	"math"
	"math/cmplx"
	"testing"
)

// table48k is the K-weighting of ITU-R BS.1770-4 Annex 1 Tables 1–2 at
// 48 kHz, as given on the standards sheet §5.1.
var table48k = kWeighting{
	shelf:    biquad{1.53512485958697, -2.69169618940638, 1.19839281085285, -1.69065929318241, 0.73248077421585},
	highPass: biquad{1.0, -2.0, 1.0, -1.99004745483398, 0.99007225036621},
}

func TestKWeightingCoefficients(t *testing.T) {
	cases := []struct {
		name string
		rate float64
		want kWeighting
		// checkHighPassNumerator is false where the source gives only the
		// high-pass denominator.
		checkHighPassNumerator bool
	}{
		// Source: ITU-R BS.1770-4 Annex 1 Tables 1–2, as on the standards sheet §5.1.
		{"48 kHz", 48000, table48k, true},
		// Source: standards sheet §5.1, 44.1 kHz values computed there from
		// the analog prototype (high-pass: denominator only).
		{"44.1 kHz", 44100, kWeighting{
			shelf:    biquad{1.5308412300503, -2.6509799951547, 1.1690790799216, -1.6636551132560, 0.7125954280732},
			highPass: biquad{a1: -1.9891696736298, a2: 0.9891990357870},
		}, false},
	}
	for _, c := range cases {
		got := newKWeighting(c.rate)
		check := func(stage string, got, want biquad, numerator bool) {
			pairs := [][2]float64{{got.a1, want.a1}, {got.a2, want.a2}}
			if numerator {
				pairs = append(pairs, [2]float64{got.b0, want.b0}, [2]float64{got.b1, want.b1}, [2]float64{got.b2, want.b2})
			}
			for _, p := range pairs {
				if math.Abs(p[0]-p[1]) > 1e-12 {
					t.Errorf("%s %s: got %+v, want %+v (to 1e-12)", c.name, stage, got, want)
					return
				}
			}
		}
		check("shelf", got.shelf, c.want.shelf, true)
		check("high-pass", got.highPass, c.want.highPass, c.checkHighPassNumerator)
	}
}

// responseDB is the magnitude in dB of the K-weighting k at hz for a rate.
func (k kWeighting) responseDB(hz, rate float64) float64 {
	z := cmplx.Exp(complex(0, -2*math.Pi*hz/rate))
	h := complex(1, 0)
	for _, q := range []biquad{k.shelf, k.highPass} {
		h *= (complex(q.b0, 0) + complex(q.b1, 0)*z + complex(q.b2, 0)*z*z) /
			(1 + complex(q.a1, 0)*z + complex(q.a2, 0)*z*z)
	}
	return 20 * math.Log10(cmplx.Abs(h))
}

// TestKWeightingKeepsResponseAcrossRates measures the weighting gain of
// the meter with 0 dBFS sines and compares it with the response of the
// 48 kHz table. Source: BS.1770 requires the same response at every rate
// (standards sheet §5.1); the reference is the Annex 1 table's response.
func TestKWeightingKeepsResponseAcrossRates(t *testing.T) {
	frequencies := []float64{25, 100, 997, 3000, 10000}
	cases := []struct {
		rate      int
		tolerance float64 // dB
	}{
		{48000, 0.002}, // the table itself, through the meter
		{32000, 0.02},
		{44100, 0.02},
		{88200, 0.02},
		{96000, 0.02},
		{192000, 0.02},
		{384000, 0.02},
	}
	for _, c := range cases {
		m := NewMeter(1, c.rate)
		for _, hz := range frequencies {
			x := make([]float64, 4*c.rate)
			for n := range x {
				x[n] = math.Sin(2 * math.Pi * hz * float64(n) / float64(c.rate))
			}
			// A sine of peak 1 has mean square 1/2 (−3.0103 dB).
			got := m.Integrated(x) - loudnessOffset + 10*math.Log10(2)
			want := table48k.responseDB(hz, tableRate)
			t.Logf("%d Hz rate, %g Hz tone: K gain %.4f dB, 48 kHz table %.4f dB", c.rate, hz, got, want)
			if math.Abs(got-want) > c.tolerance {
				t.Errorf("%d Hz rate, %g Hz tone: K gain %.4f dB, 48 kHz table %.4f dB (±%g)", c.rate, hz, got, want, c.tolerance)
			}
		}
	}
}
