package patch

import (
	"fmt"
	"math"

	"gopkg.in/yaml.v3"
)

// body reads a spectral envelope: a list of [hz, dB] points with rising
// frequencies.
func (d *decoder) body(n *yaml.Node, path string) []BodyPoint {
	var points []BodyPoint
	for i, item := range d.list(n, path) {
		sub := fmt.Sprintf("%s[%d]", path, i)
		pair := d.resolve(item)
		if pair.Kind != yaml.SequenceNode || len(pair.Content) != 2 {
			d.errorf(pair, sub, "expected a point [hz, dB] such as [800, 6], found %s", describe(pair))
			continue
		}
		hz, ok1 := d.ranged(pair.Content[0], sub+"[0]", 1, 1e6, " Hz")
		db, ok2 := d.ranged(pair.Content[1], sub+"[1]", -200, 60, " dB")
		if !ok1 || !ok2 {
			continue
		}
		if len(points) > 0 && hz <= points[len(points)-1].Hz {
			d.errorf(pair.Content[0], sub+"[0]", "the points must rise in frequency: %g Hz follows %g Hz", hz, points[len(points)-1].Hz)
			continue
		}
		points = append(points, BodyPoint{Hz: hz, DB: db})
	}
	return points
}

// bodyGain is the gain of the spectral envelope at hz: the dB of the points
// interpolated linearly in log frequency, held flat beyond the first and
// last point; 1 without a body.
func bodyGain(points []BodyPoint, hz float64) float64 {
	if len(points) == 0 {
		return 1
	}
	db := points[0].DB
	switch last := points[len(points)-1]; {
	case hz <= points[0].Hz:
	case hz >= last.Hz:
		db = last.DB
	default:
		i := 1
		for points[i].Hz < hz {
			i++
		}
		a, b := points[i-1], points[i]
		u := math.Log(hz/a.Hz) / math.Log(b.Hz/a.Hz)
		db = a.DB + u*(b.DB-a.DB)
	}
	return math.Pow(10, db/20)
}
