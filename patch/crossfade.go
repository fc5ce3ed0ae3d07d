package patch

import (
	"gopkg.in/yaml.v3"
)

// VelocityFade is where a velocity layer cross-fades with its neighbours,
// as SFZ's xfin_lovel/xfin_hivel and xfout_lovel/xfout_hivel give it: the
// layer fades in over In, from silence at In[0] to full level at In[1],
// and out over Out, from full level at Out[0] to silence at Out[1]. A side
// without a neighbour is {0, 0}.
type VelocityFade struct {
	In, Out [2]int
}

// crossfade is the span of velocities the layers either side of the
// boundary above velocity v share when they overlap by n: n velocities
// centred on the boundary between v and v + 1, the odd one out of an odd
// n falling below it. Both layers sound at every velocity from first to
// last; the fade runs from the velocity below the first, where the upper
// layer would be silent, to the one above the last, where the lower would.
func crossfade(v, n int) (first, last int) {
	return v + 1 - (n+1)/2, v + n/2
}

// layerRange is the velocities layer i of vels serves and how it fades:
// the velocities above the layer below it up to its own, the lowest
// starting at 1 and the highest reaching 127, each widened by its share of
// the overlap with its neighbours when they cross-fade over fade
// velocities. With one layer there is nothing to fade into.
func layerRange(vels []int, i, fade int) (low, high int, f *VelocityFade) {
	low, high = 1, vels[i]
	if i > 0 {
		low = vels[i-1] + 1
	}
	if i == len(vels)-1 {
		high = 127
	}
	if fade == 0 || len(vels) == 1 {
		return low, high, nil
	}
	f = &VelocityFade{}
	if i > 0 {
		first, last := crossfade(vels[i-1], fade)
		low, f.In = first, [2]int{first - 1, last + 1}
	}
	if i+1 < len(vels) {
		first, last := crossfade(vels[i], fade)
		high, f.Out = last, [2]int{first - 1, last + 1}
	}
	return low, high, f
}

// checkCrossfade reports a crossfade wider than the narrowest layer: the
// overlap below a layer would then run into the overlap above it, and
// three layers would sound at once, no longer at constant power. (An
// outer layer fades on one side only, but the rule is kept simple: no
// overlap wider than any layer.)
func (d *decoder) checkCrossfade(p *Patch, at *yaml.Node) {
	if p.LayerCrossfade == 0 || len(p.Velocities) < 2 {
		return
	}
	narrow, width := 0, 128
	for i := range p.Velocities {
		low, high, _ := layerRange(p.Velocities, i, 0)
		if high-low+1 < width {
			narrow, width = i, high-low+1
		}
	}
	if p.LayerCrossfade > width {
		low, high, _ := layerRange(p.Velocities, narrow, 0)
		d.errorf(at, "layer_crossfade", "a crossfade over %d velocities is wider than the narrowest layer, velocity %d's %d–%d (%d velocities); at most %d, or spread the layers",
			p.LayerCrossfade, p.Velocities[narrow], low, high, width, width)
	}
}
