package kernel

// The vector forms' side of the Oversampler: the stretches laid side by
// side, and the points no stretch holds whole.

// makeLanes makes the scratch the vector forms need for up to n
// intervals.
func (o *Oversampler) makeLanes(n int) {
	rows := laneRows(n) + 8 // QuadruplePeak's midpoints
	o.lanes = make([]float64, (rows+window-1)*Lanes)
	o.mid = make([]float64, rows*Lanes)
}

// laneRows is how many rows each of the Lanes stretches gets to cover n
// points between them: a multiple of rowBlock, at least n/Lanes.
func laneRows(n int) int {
	rows := (n + Lanes - 1) / Lanes
	return (rows + rowBlock - 1) / rowBlock * rowBlock
}

// laneStarts spreads Lanes stretches of rows each over [from, from+n):
// the first starts at from, the last ends at from+n, and no gap is left
// between them (rows ≥ n/Lanes).
func laneStarts(from, n, rows int) (starts [Lanes]int) {
	for l := range starts {
		starts[l] = from + l*(n-rows)/(Lanes-1)
	}
	return starts
}

// spread lays out rows values of x from each start side by side in
// o.lanes, with zeros past the end of x, and returns them. The vector
// forms copy the rows every stretch holds, a block at a time.
func (o *Oversampler) spread(x []float64, starts *[Lanes]int, rows int) []float64 {
	lanes := o.lanes[:rows*Lanes]
	whole := rows
	for _, start := range starts {
		whole = min(whole, len(x)-start)
	}
	whole = whole / spreadBlock * spreadBlock
	if whole > 0 {
		spreadRows(active, lanes[:whole*Lanes], x, starts, whole)
	}
	for l, start := range starts {
		for i := whole; i < rows; i++ {
			v := 0.0
			if start+i < len(x) {
				v = x[start+i]
			}
			lanes[i*Lanes+l] = v
		}
	}
	return lanes
}

// quadruplePeakLanes is QuadruplePeak for x of n intervals by the vector
// forms; it reports false, and does nothing, where they do not run or n
// is too short to share among the lanes.
func (o *Oversampler) quadruplePeakLanes(x []float64, n int, peak float64) (float64, bool) {
	full := n - 6 // the k with all four points, from 3
	if active == Plain || full < Lanes*rowBlock {
		return peak, false
	}
	rows := laneRows(full)
	starts := laneStarts(3, full, rows)
	// Each stretch's points read the midpoints 3 either side, and its
	// first sample is FirstPairs−1 before the first midpoint; the rows of
	// midpoints are rounded up to a whole number of blocks.
	midRows := rows + 8
	for l := range starts {
		starts[l] -= 3
	}
	lanes := o.spread(x, &starts, midRows+window-1)
	mid := o.mid[:midRows*Lanes]
	midpoints(active, mid, lanes, &o.f, midRows)
	const first = 3 * Lanes // the row of the first point
	peak = quadruplePeak(active, lanes[(FirstPairs-1)*Lanes+first:], mid[first:], &o.f, rows, peak)
	// The ends: m[2] and the midpoint after it, s[n−3] and the midpoint
	// after it, made from the midpoints they read.
	m := o.natural[:n]
	midpointsGo(m[:6], x, &o.f)
	midpointsGo(m[n-6:], x[n-6:], &o.f)
	peak = quadruplePeakGo(x[FirstPairs-1:], m, &o.f, 2, 3, peak)
	return quadruplePeakGo(x[FirstPairs-1:], m, &o.f, n-3, n-2, peak), true
}

// doublePeakLanes is DoublePeak for x of n intervals, but for s[n], by
// the vector forms; it reports false, and does nothing, where they do not
// run or n is too short to share among the lanes.
func (o *Oversampler) doublePeakLanes(x []float64, n int, peak float64) (float64, bool) {
	if active == Plain || n < Lanes*rowBlock {
		return peak, false
	}
	rows := laneRows(n)
	starts := laneStarts(0, n, rows)
	lanes := o.spread(x, &starts, rows+window-1)
	mid := o.mid[:rows*Lanes]
	midpoints(active, mid, lanes, &o.f, rows)
	samples := lanes[(FirstPairs-1)*Lanes : (FirstPairs-1+rows)*Lanes]
	return Peak(mid, Peak(samples, peak)), true
}
