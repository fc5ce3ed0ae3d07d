package main

import (
	"encoding/json"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// TestCheckShowsNoiseBands: check lists each key's noise bands, their
// edges in Hz (a ratio times the key's 12-TET fundamental, f = 440 ·
// 2^((m − 69)/12), or a frequency as written), slope, level (−12 dB as
// written), width and pan, what the band limit does to each (at 48 kHz
// the default limit is 21600 Hz, its fade from 19440 Hz), and counts the
// bands that start above the limit; as text, a table of them.
func TestCheckShowsNoiseBands(t *testing.T) {
	dir := writeFiles(t, map[string]string{"air.yaml": `name: air
keys: [A4, A7]
channels: 2
partials:
  - noise: {low: 2, high: 9000 Hz, slope: -3, width: 0.5}
    amplitude: -12 dB
    pan: -0.25
  - noise: {low: 5, high: 7}
  - noise: {low: 7, high: 9}
`})
	type band struct {
		Group     int     `json:"group"`
		Low       float64 `json:"low_hz"`
		High      float64 `json:"high_hz"`
		Slope     float64 `json:"slope_db_per_octave"`
		LevelDB   float64 `json:"level_db"`
		Width     float64 `json:"width"`
		Pan       float64 `json:"pan"`
		BandLimit string  `json:"band_limit"`
	}
	var report struct {
		Result struct {
			PerKey []struct {
				Note    string `json:"note"`
				Bands   []band `json:"noise_bands"`
				Dropped int    `json:"noise_bands_dropped"`
			} `json:"per_key"`
		} `json:"result"`
	}
	path := filepath.Join(dir, "air.yaml")
	code, stdout, stderr := runCLI("check", path, "--json")
	if err := json.Unmarshal([]byte(stdout), &report); code != exitOK || err != nil {
		t.Fatalf("check: exit %d, %v, %s", code, err, stderr)
	}
	want := map[string]struct {
		bands   []band
		dropped int
	}{
		"A4": {[]band{{0, 880, 9000, -3, -12, 0.5, -0.25, "kept"}, {1, 2200, 3080, 0, 0, 1, 0, "kept"}, {2, 3080, 3960, 0, 0, 1, 0, "kept"}}, 0},
		// A7 is 3520 Hz: 2 × 3520 = 7040 Hz, 5 × 3520 = 17600 Hz (in the
		// fade), 7 × 3520 = 24640 Hz (past the limit).
		"A7": {[]band{{0, 7040, 9000, -3, -12, 0.5, -0.25, "kept"}, {1, 17600, 24640, 0, 0, 1, 0, "clipped"}}, 1},
	}
	if len(report.Result.PerKey) != 2 {
		t.Fatalf("%d keys reported", len(report.Result.PerKey))
	}
	for _, k := range report.Result.PerKey {
		w := want[k.Note]
		if len(k.Bands) != len(w.bands) || k.Dropped != w.dropped {
			t.Errorf("%s: bands %+v, %d dropped; want %+v, %d dropped", k.Note, k.Bands, k.Dropped, w.bands, w.dropped)
			continue
		}
		for i, b := range k.Bands {
			wb := w.bands[i]
			if math.Abs(b.Low-wb.Low) > 1e-9 || math.Abs(b.High-wb.High) > 1e-9 || b.LevelDB != wb.LevelDB {
				t.Errorf("%s band %d: %+v, want %+v", k.Note, i, b, wb)
			}
			b.Low, b.High = wb.Low, wb.High
			if b != wb {
				t.Errorf("%s band %d: %+v, want %+v", k.Note, i, b, wb)
			}
		}
	}
	code, stdout, _ = runCLI("check", path)
	for _, line := range []string{"noise bands", "A4      0    880.0   9000.0          -3.0     -12.0   0.50  -0.25        kept", "A7      1  17600.0  24640.0", "clipped", "A7: 1 band dropped, starting at or above the band limit"} {
		if code != exitOK || !strings.Contains(stdout, line) {
			t.Errorf("check's text lacks %q:\n%s", line, stdout)
		}
	}
}
