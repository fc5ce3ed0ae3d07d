// Package flac writes sample sets as FLAC, the lossless format of RFC 9639,
// and reads back the metadata a set's verification needs.
//
// Samples are quantised exactly as sinter/synth/wav quantises them (by
// kernel.PackPCM, with the same dither), so a FLAC file decodes to the
// integer samples of the WAV file the same options make. The stream is
// the streamable subset (RFC 9639, section 7): blocks of 4096 frames,
// fixed predictors of order 0 to 4 and linear predictors of order up to
// 12 with 15-bit coefficients, partitioned Rice coding of partition order
// up to 8, and for stereo the best of the four channel assignments per
// block. The smpl and inst chunks a WAV file would carry go into
// APPLICATION blocks with the registered id "riff" (RFC 9639, section
// 8.4), one chunk a block, so the root key and loop travel with the file.
package flac

import (
	"crypto/md5"
	"encoding/binary"
	"fmt"
	"io"
	"math"

	"sinter/synth/kernel"
	"sinter/synth/wav"
)

// Options describes the file to write.
type Options struct {
	SampleRate int // Hz, 1 to 655350 (what STREAMINFO's 20 bits hold, within the frame header's codes)
	BitDepth   int // 16 or 24: FLAC holds integer samples only
	Channels   int // 1 or 2
	// Dither and DitherSeed are wav.Options' own: TPDF dither of ±1 LSB
	// from a counter-based generator, the same noise for the same seed.
	Dither     bool
	DitherSeed uint64
	Sampler    *wav.Sampler    // optional, stored as a smpl chunk
	Instrument *wav.Instrument // optional, stored as an inst chunk
}

// BlockSize is the number of frames in every block but the last.
const BlockSize = 4096

// OptionsError reports options Encode cannot write; it writes nothing then.
type OptionsError string

// Error returns the message with the package prefix.
func (e OptionsError) Error() string { return "flac: " + string(e) }

func validate(samples int, opts Options) error {
	switch {
	case opts.BitDepth != 16 && opts.BitDepth != 24:
		return OptionsError(fmt.Sprintf("bit depth %d not supported (16 or 24; FLAC holds integer samples)", opts.BitDepth))
	case opts.Channels != 1 && opts.Channels != 2:
		return OptionsError(fmt.Sprintf("%d channels not supported (1 or 2)", opts.Channels))
	case opts.SampleRate < 1 || opts.SampleRate > 655350:
		return OptionsError(fmt.Sprintf("sample rate %d Hz out of range (1 to 655350)", opts.SampleRate))
	case samples%opts.Channels != 0:
		return OptionsError(fmt.Sprintf("%d samples do not make whole %d-channel frames", samples, opts.Channels))
	case samples/opts.Channels >= 1<<36:
		return OptionsError(fmt.Sprintf("%d frames are more than STREAMINFO's 36 bits count", samples/opts.Channels))
	}
	if s := opts.Sampler; s != nil {
		for i, l := range s.Loops {
			if l.Start > l.End || int64(l.End) >= int64(samples/opts.Channels) {
				return OptionsError(fmt.Sprintf("smpl loop %d [%d, %d] not within frames 0 to %d (End is inclusive)", i, l.Start, l.End, samples/opts.Channels-1))
			}
		}
	}
	return nil
}

// Metadata block types (RFC 9639, section 8.1).
const (
	blockStreamInfo  = 0
	blockApplication = 2
)

// Encode writes a complete FLAC stream holding samples: interleaved
// frames, full scale ±1.0, quantised as wav.Encode quantises them.
func Encode(w io.Writer, samples []float64, opts Options) error {
	if err := validate(len(samples), opts); err != nil {
		return err
	}
	e := newEncoder(opts)
	frames := len(samples) / opts.Channels
	// STREAMINFO comes first and holds the MD5 of the decoded samples, so
	// the samples are quantised twice: once for the MD5, once to encode.
	// That costs less than holding the file's codes in memory.
	sum := md5.New()
	for first := 0; first < frames; first += BlockSize {
		sum.Write(e.pack(samples, first, min(BlockSize, frames-first)))
	}
	var md [16]byte
	sum.Sum(md[:0])
	if _, err := w.Write(header(frames, opts, md)); err != nil {
		return err
	}
	for first, number := 0, uint64(0); first < frames; first, number = first+BlockSize, number+1 {
		e.frame(samples, first, min(BlockSize, frames-first), number)
		if len(e.out.buf) >= 1<<16 || first+BlockSize >= frames {
			if _, err := w.Write(e.out.buf); err != nil {
				return err
			}
			e.out.buf = e.out.buf[:0]
		}
	}
	return nil
}

// header returns the stream marker and the metadata blocks.
func header(frames int, opts Options, md [16]byte) []byte {
	b := []byte("fLaC")
	var apps [][]byte
	for _, chunk := range [...]wav.Options{{Sampler: opts.Sampler, SampleRate: opts.SampleRate}, {Instrument: opts.Instrument}} {
		if c := wav.Chunks(chunk); len(c) > 0 {
			apps = append(apps, c)
		}
	}
	blockHeader := func(kind, size int, last bool) {
		h := uint32(kind)<<24 | uint32(size)
		if last {
			h |= 1 << 31
		}
		b = binary.BigEndian.AppendUint32(b, h)
	}
	// STREAMINFO (RFC 9639, section 8.2): block sizes, frame sizes (0:
	// not known when the header is written), rate, channels, depth,
	// frames and MD5.
	blockHeader(blockStreamInfo, 34, len(apps) == 0)
	b = binary.BigEndian.AppendUint16(b, BlockSize)
	b = binary.BigEndian.AppendUint16(b, BlockSize)
	b = append(b, 0, 0, 0, 0, 0, 0)
	packed := uint64(opts.SampleRate)<<44 | uint64(opts.Channels-1)<<41 | uint64(opts.BitDepth-1)<<36 | uint64(frames)
	b = binary.BigEndian.AppendUint64(b, packed)
	b = append(b, md[:]...)
	for i, c := range apps {
		blockHeader(blockApplication, 4+len(c), i == len(apps)-1)
		b = append(b, "riff"...)
		b = append(b, c...)
	}
	return b
}

// MaxSize is the most bytes Encode writes for frames frames with opts:
// every block stored verbatim, with the widest frame header.
func MaxSize(frames int, opts Options) int64 {
	size := int64(len(header(frames, opts, [16]byte{})))
	blocks := (frames + BlockSize - 1) / BlockSize
	// A frame header is at most 16 bytes and its CRC-16 2; a verbatim
	// subframe one header byte and its samples, the side channel one bit
	// wider, padded to a byte once per frame.
	perBlock := int64(16 + 2 + 1 + opts.Channels*(1+(BlockSize*(opts.BitDepth+1)+7)/8))
	return size + int64(blocks)*perBlock
}

// encoder holds one stream's scratch memory.
type encoder struct {
	opts   Options
	pcm    kernel.PCM
	packed []byte
	// ch holds the block's channels: left (or mono), right, mid, side.
	ch     [4][]int64
	res    []int64
	u      [2][]uint64 // folded residuals of the fixed and the linear predictor
	out    bitWriter
	window []float64
	lpc    lpcScratch
}

func newEncoder(opts Options) *encoder {
	e := &encoder{opts: opts, pcm: kernel.PCM{Bits: opts.BitDepth, Dither: opts.Dither, Seed: opts.DitherSeed},
		packed: make([]byte, BlockSize*opts.Channels*opts.BitDepth/8),
		res:    make([]int64, BlockSize), u: [2][]uint64{make([]uint64, BlockSize), make([]uint64, BlockSize)}}
	for i := range e.ch {
		e.ch[i] = make([]int64, BlockSize)
	}
	return e
}

// pack quantises the n frames from frame first and returns their codes as
// little-endian bytes: the bytes FLAC's MD5 is taken over (RFC 9639,
// section 8.2: signed, little-endian, interleaved, whole bytes per
// sample), which are also the WAV file's data.
func (e *encoder) pack(samples []float64, first, n int) []byte {
	c := e.opts.Channels
	return kernel.PackPCM(e.packed, samples[first*c:(first+n)*c], e.pcm, uint64(first*c))
}

// split quantises the n frames from frame first into e.ch: left (or mono)
// and right, and for stereo mid and side.
func (e *encoder) split(samples []float64, first, n int) {
	b := e.pack(samples, first, n)
	c := e.opts.Channels
	for i := range n * c {
		var v int64
		if e.opts.BitDepth == 16 {
			v = int64(int16(binary.LittleEndian.Uint16(b[2*i:])))
		} else {
			v = int64(int32(uint32(b[3*i])<<8|uint32(b[3*i+1])<<16|uint32(b[3*i+2])<<24) >> 8)
		}
		e.ch[i%c][i/c] = v
	}
	if c == 2 {
		// Mid and side as RFC 9639, section 4.2, defines them: side is
		// left − right, mid (left + right) >> 1, the dropped bit being
		// side's lowest.
		l, r, m, s := e.ch[0][:n], e.ch[1][:n], e.ch[2][:n], e.ch[3][:n]
		for i := range n {
			m[i] = (l[i] + r[i]) >> 1
			s[i] = l[i] - r[i]
		}
	}
}

// Channel assignments (RFC 9639, section 9.1.3).
const (
	leftSide  = 0b1000
	sideRight = 0b1001
	midSide   = 0b1010
)

// frame encodes frames [first, first+n) as frame number.
func (e *encoder) frame(samples []float64, first, n int, number uint64) {
	e.split(samples, first, n)
	bps := uint(e.opts.BitDepth)
	type sub struct {
		ch   int
		bits uint
	}
	subs := []sub{{0, bps}}
	assignment := 0 // mono: one channel
	if e.opts.Channels == 2 {
		// The assignment that costs least by the fixed predictors'
		// estimate, as FLAC encoders commonly choose it (common
		// practice); each subframe then picks its own predictor.
		var est [4]float64
		for i := range est {
			_, est[i] = bestFixed(e.ch[i][:n])
		}
		options := []struct {
			code int
			subs []sub
			cost float64
		}{
			{0b0001, []sub{{0, bps}, {1, bps}}, est[0] + est[1]},
			{leftSide, []sub{{0, bps}, {3, bps + 1}}, est[0] + est[3]},
			{sideRight, []sub{{3, bps + 1}, {1, bps}}, est[3] + est[1]},
			{midSide, []sub{{2, bps}, {3, bps + 1}}, est[2] + est[3]},
		}
		best := options[0]
		for _, o := range options[1:] {
			if o.cost < best.cost {
				best = o
			}
		}
		assignment, subs = best.code, best.subs
	}
	w := &e.out
	start := len(w.buf)
	e.frameHeader(n, number, assignment)
	for _, s := range subs {
		e.subframe(e.ch[s.ch][:n], s.bits)
	}
	w.align()
	w.buf = binary.BigEndian.AppendUint16(w.buf, crc16(w.buf[start:]))
}

// frameHeader writes a frame header (RFC 9639, section 9.1) for a block
// of n frames with a fixed block size.
func (e *encoder) frameHeader(n int, number uint64, assignment int) {
	w := &e.out
	start := len(w.buf)
	w.write(0xFFF8, 16) // sync code, fixed block size
	var sizeCode uint64
	switch {
	case n == BlockSize:
		sizeCode = 0b1100 // 256 · 2^(12−8)
	case n <= 256:
		sizeCode = 0b0110 // n − 1 in 8 bits at the end of the header
	default:
		sizeCode = 0b0111 // n − 1 in 16 bits
	}
	rateCode, rateBits, rateValue := rateCoding(e.opts.SampleRate)
	w.write(sizeCode, 4)
	w.write(rateCode, 4)
	w.write(uint64(assignment), 4)
	depthCode := uint64(0b100) // 16 bits
	if e.opts.BitDepth == 24 {
		depthCode = 0b110
	}
	w.write(depthCode<<1, 4) // and the reserved bit, 0
	w.buf = appendCoded(w.buf, number)
	switch sizeCode {
	case 0b0110:
		w.write(uint64(n-1), 8)
	case 0b0111:
		w.write(uint64(n-1), 16)
	}
	if rateBits > 0 {
		w.write(rateValue, rateBits)
	}
	w.buf = append(w.buf, crc8(w.buf[start:]))
}

// rateCoding returns the frame header's sample-rate code for rate and the
// bits that follow the header for it (RFC 9639, section 9.1.2).
func rateCoding(rate int) (code uint64, bits uint, value uint64) {
	switch rate {
	case 88200:
		return 0b0001, 0, 0
	case 176400:
		return 0b0010, 0, 0
	case 192000:
		return 0b0011, 0, 0
	case 8000:
		return 0b0100, 0, 0
	case 16000:
		return 0b0101, 0, 0
	case 22050:
		return 0b0110, 0, 0
	case 24000:
		return 0b0111, 0, 0
	case 32000:
		return 0b1000, 0, 0
	case 44100:
		return 0b1001, 0, 0
	case 48000:
		return 0b1010, 0, 0
	case 96000:
		return 0b1011, 0, 0
	}
	switch {
	case rate%1000 == 0 && rate/1000 < 256:
		return 0b1100, 8, uint64(rate / 1000)
	case rate < 1<<16:
		return 0b1101, 16, uint64(rate)
	case rate%10 == 0 && rate/10 < 1<<16:
		return 0b1110, 16, uint64(rate / 10)
	}
	return 0b0000, 0, 0 // as STREAMINFO says
}

// appendCoded appends a frame number in the variable-length code of RFC
// 9639, section 9.1.5, the UTF-8 scheme extended to 36 bits.
func appendCoded(b []byte, v uint64) []byte {
	if v < 0x80 {
		return append(b, byte(v))
	}
	// Continuation bytes carry 6 bits each; the first byte has n leading
	// ones for n bytes in all and 7 − n bits of the number.
	n := 2
	for v >= 1<<(5*n+1) && n < 7 {
		n++
	}
	first := byte(0xFF << (8 - n))
	b = append(b, first|byte(v>>(6*(n-1))))
	for i := n - 2; i >= 0; i-- {
		b = append(b, 0x80|byte(v>>(6*i))&0x3F)
	}
	return b
}

// Subframe types (RFC 9639, section 9.2.1).
const (
	typeConstant = 0b000000
	typeVerbatim = 0b000001
	typeFixed    = 0b001000 // | order
	typeLPC      = 0b100000 // | order − 1
)

// subframe writes x, of bps bits a sample, as the cheapest of a constant,
// a fixed predictor, a linear predictor and verbatim samples.
func (e *encoder) subframe(x []int64, bps uint) {
	w := &e.out
	n := len(x)
	constant := true
	for _, v := range x[1:] {
		if v != x[0] {
			constant = false
			break
		}
	}
	if constant {
		w.write(typeConstant<<1, 8)
		w.writeSigned(x[0], bps)
		return
	}
	verbatim := uint64(n) * uint64(bps)
	bestBits := verbatim
	var best *prediction
	if n > 4 {
		order, _ := bestFixed(x)
		fixed := &prediction{kind: typeFixed | order, order: order, u: e.u[0]}
		if e.residual(x, fixed) {
			fixed.rice = planRice(fixed.u[:n-order], n, order)
			if bits := uint64(order)*uint64(bps) + fixed.rice.bits; bits < bestBits {
				best, bestBits = fixed, bits
			}
		}
	}
	if lp := e.linear(x, bps); lp != nil {
		lp.u = e.u[1]
		if e.residual(x, lp) {
			lp.rice = planRice(lp.u[:n-lp.order], n, lp.order)
			if bits := uint64(lp.order)*uint64(bps) + 4 + 5 + uint64(lp.order)*lpcPrecision + lp.rice.bits; bits < bestBits {
				best, bestBits = lp, bits
			}
		}
	}
	if best == nil {
		w.write(typeVerbatim<<1, 8)
		for _, v := range x {
			w.writeSigned(v, bps)
		}
		return
	}
	w.write(uint64(best.kind)<<1, 8)
	for _, v := range x[:best.order] {
		w.writeSigned(v, bps)
	}
	if best.kind&typeLPC != 0 {
		w.write(lpcPrecision-1, 4)
		w.write(uint64(best.shift), 5)
		for _, c := range best.coefs[:best.order] {
			w.writeSigned(int64(c), lpcPrecision)
		}
	}
	e.writeRice(best.rice, best.u, n, best.order)
}

// prediction is a fixed or linear predictor and its residual's coding.
type prediction struct {
	kind, order int
	coefs       [maxLPCOrder]int32 // linear: coefs[j] weighs x[i−1−j]
	shift       int
	rice        ricePlan
	u           []uint64 // the folded residual
}

// residual computes x's residual under p, folded, into p.u, and reports
// whether every residual fits the 32 bits a decoder may hold it in (RFC
// 9639, section 9.2.7: residuals must be representable in 32-bit signed
// two's complement).
func (e *encoder) residual(x []int64, p *prediction) bool {
	n, order := len(x), p.order
	res := e.res[:n-order]
	if p.kind&typeLPC == 0 {
		fixedResidual(res, x, order)
	} else {
		// The coefficients reversed, so the sum runs forward over the
		// history x[i−order .. i−1].
		var rc [maxLPCOrder]int64
		for j := range order {
			rc[order-1-j] = int64(p.coefs[j])
		}
		c := rc[:order]
		for i := order; i < n; i++ {
			h := x[i-order : i]
			h = h[:len(c)]
			var sum int64
			for j, cj := range c {
				sum += cj * h[j]
			}
			res[i-order] = x[i] - sum>>p.shift
		}
	}
	u := p.u[:len(res)]
	for i, r := range res {
		if r < math.MinInt32 || r > math.MaxInt32 {
			return false
		}
		// Folded as RFC 9639, section 9.2.7.3: 2r for r ≥ 0, −2r − 1
		// below.
		u[i] = uint64(r<<1 ^ r>>63)
	}
	return true
}

// fixedResidual writes x's residual under the fixed predictor of order
// (RFC 9639, section 9.2.5: the k-th difference of the signal).
func fixedResidual(res, x []int64, order int) {
	for i := order; i < len(x); i++ {
		var r int64
		switch order {
		case 0:
			r = x[i]
		case 1:
			r = x[i] - x[i-1]
		case 2:
			r = x[i] - 2*x[i-1] + x[i-2]
		case 3:
			r = x[i] - 3*x[i-1] + 3*x[i-2] - x[i-3]
		case 4:
			r = x[i] - 4*x[i-1] + 6*x[i-2] - 4*x[i-3] + x[i-4]
		}
		res[i-order] = r
	}
}

// bestFixed returns the fixed predictor order whose residual has the
// least absolute sum, counted from sample 4 for all orders alike, and an
// estimate of its coded size in bits: n · (log2 of the mean magnitude + 1),
// what a Rice code of a Laplacian residual about costs (common practice).
func bestFixed(x []int64) (order int, bits float64) {
	if len(x) <= 4 {
		return 0, float64(len(x)) * 32
	}
	var sums [5]uint64
	for i := 4; i < len(x); i++ {
		d0 := x[i]
		d1 := d0 - x[i-1]
		d2 := d1 - (x[i-1] - x[i-2])
		d3 := d2 - (x[i-1] - 2*x[i-2] + x[i-3])
		d4 := d3 - (x[i-1] - 3*x[i-2] + 3*x[i-3] - x[i-4])
		sums[0] += abs(d0)
		sums[1] += abs(d1)
		sums[2] += abs(d2)
		sums[3] += abs(d3)
		sums[4] += abs(d4)
	}
	for o := 1; o < 5; o++ {
		if sums[o] < sums[order] {
			order = o
		}
	}
	n := float64(len(x) - 4)
	return order, float64(len(x)) * (math.Log2(max(1, float64(sums[order])/n)) + 1)
}

func abs(v int64) uint64 {
	m := v >> 63
	return uint64(v ^ m - m)
}
