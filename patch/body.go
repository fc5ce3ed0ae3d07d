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
	d.points(n, path, axis{"hz", "frequency", " Hz", 1, 1e6, 800}, axis{"dB", "level", " dB", -200, 60, 6}, func(x, y float64) {
		points = append(points, BodyPoint{Hz: x, DB: y})
	})
	return points
}

// axis describes one coordinate of a breakpoint for points: its name in
// the example point, the noun for it, its unit as range errors print it,
// its range and an example value.
type axis struct {
	name, noun, unit string
	lo, hi, example  float64
}

// points reads a list of [x, y] breakpoints whose x rise, calling add for
// each good one in order.
func (d *decoder) points(n *yaml.Node, path string, x, y axis, add func(x, y float64)) {
	last := math.Inf(-1)
	for i, item := range d.list(n, path) {
		sub := fmt.Sprintf("%s[%d]", path, i)
		pair := d.resolve(item)
		if pair.Kind != yaml.SequenceNode || len(pair.Content) != 2 {
			d.errorf(pair, sub, "expected a point [%s, %s] such as [%g, %g], found %s", x.name, y.name, x.example, y.example, describe(pair))
			continue
		}
		px, ok1 := d.ranged(pair.Content[0], sub+"[0]", x.lo, x.hi, x.unit)
		py, ok2 := d.ranged(pair.Content[1], sub+"[1]", y.lo, y.hi, y.unit)
		if !ok1 || !ok2 {
			continue
		}
		if px <= last {
			d.errorf(pair.Content[0], sub+"[0]", "the points must rise in %s: %g%s follows %g%s", x.noun, px, x.unit, last, x.unit)
			continue
		}
		last = px
		add(px, py)
	}
}

// bodyGain is the gain of the spectral envelope at hz: the dB of the points
// interpolated linearly in log frequency, held flat beyond the first and
// last point; 1 without a body.
func bodyGain(points []BodyPoint, hz float64) float64 {
	if len(points) == 0 {
		return 1
	}
	db := heldLinear(len(points), math.Log(hz), func(i int) (float64, float64) { return math.Log(points[i].Hz), points[i].DB })
	return math.Pow(10, db/20)
}

// heldLinear interpolates the count breakpoints that point returns, in
// rising x, linearly at x, holding the first value before them and the
// last after them.
func heldLinear(count int, x float64, point func(i int) (x, y float64)) float64 {
	x0, y0 := point(0)
	if x <= x0 {
		return y0
	}
	for i := 1; i < count; i++ {
		x1, y1 := point(i)
		if x < x1 {
			return y0 + (y1-y0)*(x-x0)/(x1-x0)
		}
		x0, y0 = x1, y1
	}
	return y0
}
