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
	d.points(n, path, bodyRule, axis{"hz", "frequency", 800, bodyHzRule}, axis{"dB", "level", 6, bodyDBRule}, func(x, y float64) {
		points = append(points, BodyPoint{Hz: x, DB: y})
	})
	return points
}

// axis describes one coordinate of a breakpoint for points: its name in
// the example point, the noun for it, an example value and the rule for
// its range and unit.
type axis struct {
	name, noun string
	example    float64
	rule       *Rule
}

// points reads a list of [x, y] breakpoints whose x rise, as many as rule
// lr allows, calling add for each good one in order.
func (d *decoder) points(n *yaml.Node, path string, lr *Rule, x, y axis, add func(x, y float64)) {
	last := math.Inf(-1)
	for i, item := range d.list(n, path, lr) {
		sub := fmt.Sprintf("%s[%d]", path, i)
		pair := d.resolve(item)
		if pair.Kind != yaml.SequenceNode || len(pair.Content) != 2 {
			d.errorf(pair, sub, "expected a point [%s, %s] such as [%g, %g], found %s", x.name, y.name, x.example, y.example, describe(pair))
			continue
		}
		px, ok1 := d.ranged(pair.Content[0], sub+"[0]", x.rule)
		py, ok2 := d.ranged(pair.Content[1], sub+"[1]", y.rule)
		if !ok1 || !ok2 {
			continue
		}
		if px <= last {
			d.errorf(pair.Content[0], sub+"[0]", "the points must rise in %s: %g%s follows %g%s", x.noun, px, x.rule.Unit, last, x.rule.Unit)
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
