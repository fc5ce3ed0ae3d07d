// Package loudness measures rendered buffers: integrated loudness per
// ITU-R BS.1770-4 and true peak by oversampled reconstruction. It is pure
// computation on interleaved float64 samples at full scale ±1; it does no
// file I/O.
//
// A Meter is built once for a format (channel count and sample rate) and
// reused: it keeps its scratch memory. TruePeak never allocates;
// Integrated keeps one value per 100 ms of signal, in a slice that grows
// to the longest buffer measured, so after the first call on a buffer of a
// given length no call on a buffer that long or shorter allocates.
//
// # Loudness
//
// Each channel is K-weighted by two biquads, a high shelf and the RLB
// high-pass. At 48 kHz their coefficients are those of BS.1770 Annex 1;
// at other rates they are derived from an analog prototype with
// Ω = tan(π·fc/fs), and the high-pass gain is scaled so that the passband
// gain matches the 48 kHz filter, because BS.1770 asks for the same
// response at every rate. Above about 32 kHz the response stays within
// 0.02 dB of the 48 kHz one up to 10 kHz. At low rates the bilinear
// mapping squeezes the shelf towards Nyquist: at 8 kHz a 1 kHz tone reads
// about 0.2 LU low.
//
// The filters run as the K-weighting kernel of package kernel: direct
// form I of fused multiply-adds, both channels of a stereo buffer side by
// side, with the same reading whichever set of kernels runs. Between
// blocks of 256 frames a stage whose memory has fallen below 1e-30
// (−600 dBFS) is set to rest, and blocks of exact zeros met at rest are
// skipped: a silent tail costs little more than reading it, and no value
// the filters hold or square becomes subnormal, which is slow on some
// processors. The flush moves readings by nothing measurable.
//
// Loudness is gated as BS.1770-4 specifies: 400 ms blocks every 100 ms,
// absolute gate −70 LUFS, relative gate 10 LU below the power mean of the
// blocks above the absolute gate. The hop is the sample rate divided by 10
// and rounded, and a block is four hops, so at rates that are not
// multiples of 10 Hz a block is within a sample or two of 400 ms. Frames
// after the last whole hop belong to no block. A buffer shorter than one
// block is measured as a single block spanning the whole buffer, so short
// one-shot samples still get a reading.
//
// # True peak
//
// True peak follows BS.1770 Annex 2 in structure (oversample, low-pass
// interpolate, take the largest magnitude), but the interpolation filter
// is our own design, because the Annex 2 coefficients are not available
// verbatim here. It is validated against the EBU Tech 3341 true-peak cases
// and against sines whose crests are known analytically. The rate is
// doubled once (2×) or twice (4×); each doubling keeps the samples and
// adds the midpoints, from a Kaiser-windowed sinc cut off at the Nyquist
// frequency of its input: 32 taps (β = 8.25) for the first doubling, and
// 12 taps (β = 10.95) for the second, which can be short because by then
// the signal fills less than half the band. Together they form a 4-phase
// interpolator whose points up to 0.4167·fs (20 kHz at 48 kHz) lie within
// 2e-4 of full scale of the band-limited signal. What remains is the grid
// error of oversampling: a sine at f may read as low as cos(π·f/(L·fs))
// of its amplitude with oversampling L. Because the samples themselves
// are points of the grid, the reading is never below the sample peak. The
// signal is taken as zero outside the buffer, so a buffer that starts or
// stops abruptly reads the ringing of that edge.
//
// Both doublings run as package kernel's Oversampler, which on AVX2 and
// AVX-512 processors lays eight stretches of a channel side by side in
// the lanes of its vectors, with the same reading whichever set of kernels
// runs. No interpolated point exceeds the largest sample it is made from
// times the interpolator's gain bound (per doubling, the sum of its taps'
// magnitudes), so a stretch of the buffer whose largest sample times that
// bound cannot beat the peak found so far is not interpolated. That cannot
// change the reading, and the quiet tail of a decaying note costs little
// more than reading it. NaN samples are passed over.
package loudness

import (
	"math"

	"sinter/synth/kernel"
)

// Gating and calibration constants of BS.1770-4.
const (
	// loudnessOffset calibrates K-weighted power to LKFS: −0.691 dB cancels
	// the K-weighting gain at 997 Hz.
	loudnessOffset = -0.691
	// blockHops is the number of 100 ms hops in a 400 ms gating block.
	blockHops = 4
	// relativeGateRatio is −10 LU expressed as a power ratio.
	relativeGateRatio = 0.1
)

// absoluteGate is −70 LUFS expressed as K-weighted block power.
var absoluteGate = math.Pow(10, (-70-loudnessOffset)/10)

// Meter measures buffers of one format. Build it once with NewMeter and
// reuse it for many buffers. A Meter is not safe for concurrent use; give
// each goroutine its own.
type Meter struct {
	channels  int
	hopFrames int // frames in one 100 ms hop
	filter    kernel.KWeighting
	// state holds the channels' K-weighting filter memory during a call.
	state kernel.KState
	// hopEnergy holds, per 100 ms hop, the K-weighted energy summed over
	// channels; it is reused between calls.
	hopEnergy []float64

	oversampling int // 4, 2 or 1 (sample peak)
	// gainBound bounds the interpolated points against the samples.
	gainBound float64
	// chunks hold a stretch of each channel with its context, and
	// chunkViews the stretches a call measures.
	chunks      [maxChannels][]float64
	chunkViews  [maxChannels][]float64
	oversampler *kernel.Oversampler
}

// maxChannels is the largest channel count a Meter accepts. Both front
// channels weigh 1.0 in BS.1770, so channel energies simply add.
const maxChannels = 2

// NewMeter returns a meter for interleaved buffers with the given channel
// count (1 or 2; both front channels weigh 1.0 per BS.1770) and sample
// rate in Hz (8000 to 384000). It panics on any other format.
func NewMeter(channels, sampleRate int) *Meter {
	if channels < 1 || channels > maxChannels {
		panic("loudness: channel count must be 1 or 2")
	}
	if sampleRate < 8000 || sampleRate > 384000 {
		panic("loudness: sample rate must be 8000 to 384000 Hz")
	}
	m := &Meter{
		channels:  channels,
		hopFrames: int(math.Round(float64(sampleRate) / 10)),
		filter:    newKWeighting(float64(sampleRate)).forKernels(),
	}
	switch {
	case sampleRate < 96000:
		m.oversampling = 4
	case sampleRate < 192000:
		m.oversampling = 2
	default:
		m.oversampling = 1
	}
	if m.oversampling > 1 {
		m.gainBound = gainBound(m.oversampling)
		for c := range channels {
			m.chunks[c] = make([]float64, chunkFrames+2*channelPad)
		}
		m.oversampler = kernel.NewOversampler(firstTaps, secondTaps, chunkFrames+2*channelPad)
	}
	return m
}

// Integrated returns the integrated loudness of samples in LUFS per
// ITU-R BS.1770-4: K-weighting, 400 ms blocks with 75 % overlap, absolute
// gate −70 LUFS, relative gate −10 LU. The filters start from rest at the
// first frame. A buffer shorter than one block is measured as a single
// block over the whole buffer. Silence, an empty buffer, and a buffer
// with no block above the absolute gate return math.Inf(-1). samples holds
// interleaved frames; Integrated panics if its length is not a multiple
// of the channel count.
func (m *Meter) Integrated(samples []float64) float64 {
	frames := m.frameCount(samples)
	m.state = kernel.KState{}
	if frames < blockHops*m.hopFrames {
		if frames == 0 {
			return math.Inf(-1)
		}
		return gatedLoudness(m.weightedEnergy(samples) / float64(frames))
	}

	hops := frames / m.hopFrames
	if cap(m.hopEnergy) < hops {
		m.hopEnergy = make([]float64, hops)
	}
	energy := m.hopEnergy[:hops]
	hopSamples := m.hopFrames * m.channels
	for h := range energy {
		energy[h] = m.weightedEnergy(samples[h*hopSamples : (h+1)*hopSamples])
	}

	// Turn hop energies into block powers in place: block j is hops j to
	// j+3, and hop j is not read again once block j is written.
	blockFrames := float64(blockHops * m.hopFrames)
	blocks := energy[:hops-blockHops+1]
	for j := range blocks {
		blocks[j] = (energy[j] + energy[j+1] + energy[j+2] + energy[j+3]) / blockFrames
	}

	relativeGate := relativeGateRatio * meanAbove(blocks, absoluteGate)
	return gatedLoudness(meanAbove(blocks, max(absoluteGate, relativeGate)))
}

// meanAbove returns the mean of the powers strictly above gate, or 0 if
// there are none. Powers are averaged, not their loudness in dB.
func meanAbove(powers []float64, gate float64) float64 {
	sum, n := 0.0, 0
	for _, p := range powers {
		if p > gate {
			sum += p
			n++
		}
	}
	if n == 0 {
		return 0
	}
	return sum / float64(n)
}

// gatedLoudness converts a K-weighted power to LUFS, or −Inf if the power
// does not pass the absolute gate.
func gatedLoudness(power float64) float64 {
	if !(power > absoluteGate) {
		return math.Inf(-1)
	}
	return loudnessOffset + 10*math.Log10(power)
}

// frameCount returns the number of interleaved frames in samples.
func (m *Meter) frameCount(samples []float64) int {
	if len(samples)%m.channels != 0 {
		panic("loudness: buffer length is not a multiple of the channel count")
	}
	return len(samples) / m.channels
}
