// Package wav writes sampler-ready WAV files and reads their format and
// sampler metadata back.
//
// Files are RIFF/WAVE containers written in one forward pass, so any
// io.Writer works: 16-bit integer PCM with a plain fmt chunk, 24-bit integer
// PCM as WAVE_FORMAT_EXTENSIBLE, or 32-bit IEEE float with a fact chunk,
// optionally followed by smpl and inst chunks. Odd-sized chunks are followed
// by the zero pad byte RIFF requires.
//
// Integer samples are quantised as round-half-to-even(x · 2^(bits−1)),
// clamped to the integer range, so +1.0 and above encode as the largest code
// and −1.0 and below as the smallest. NaN encodes as 0. With Options.Dither,
// triangular noise d from a seeded counter-based generator is added first:
// the code is round-half-to-even(x · 2^(bits−1) + d), the sum rounded to
// float64 before the rounding to an integer; d is the sample's output of
// SplitMix64, as sinter/synth/kernel.PackPCM, which does the work, spells
// out. Float samples are converted with float32(x) and not clamped.
package wav

import (
	"encoding/binary"
	"fmt"
	"io"
	"math"
	"sync"

	"sinter/synth/kernel"
)

// Options describes the file to write.
type Options struct {
	SampleRate int         // Hz, at least 1; the byte rate must fit 32 bits
	BitDepth   int         // 16 or 24: integer PCM; 32: IEEE float
	Channels   int         // 1 or 2
	Sampler    *Sampler    // optional smpl chunk
	Instrument *Instrument // optional inst chunk

	// Dither adds triangular (TPDF) dither of ±1 LSB before integer quantisation, so that quiet
	// signals and fades keep their shape instead of turning into quantisation distortion. Ignored for
	// 32-bit float. The noise is a pure function of DitherSeed and the sample index, so a file
	// encodes to the same bytes every time.
	Dither     bool
	DitherSeed uint64
}

// Sampler is the smpl chunk content. The sample period stored in the chunk
// is derived from Options.SampleRate in nanoseconds per sample, truncated
// (44100 Hz gives 22675, 48000 Hz gives 20833).
type Sampler struct {
	UnityNote     uint8  // MIDI note played back unshifted, 0 to 127
	PitchFraction uint32 // fraction of a semitone above UnityNote, 0x80000000 = 50 cents
	Loops         []Loop
}

// Loop is a forward, endlessly repeating loop. Start and End are sample-frame
// indices; End is inclusive (the last frame played), as the RIFF smpl
// definition says, so Start <= End < number of frames.
type Loop struct{ Start, End uint32 }

// Instrument is the inst chunk content. Notes and velocities are MIDI values
// from 0 to 127.
type Instrument struct {
	UnshiftedNote uint8
	FineTune      int8 // cents, −50 to +50
	Gain          int8 // dB
	LowNote       uint8
	HighNote      uint8
	LowVelocity   uint8
	HighVelocity  uint8
}

// OptionsError reports options or a sample count that Encode cannot write.
// Encode writes nothing when it returns an OptionsError.
type OptionsError string

// Error returns the message with the package prefix.
func (e OptionsError) Error() string { return "wav: " + string(e) }

// Sizes in bytes. The chunk body sizes exclude the 8-byte chunk header, as
// the chunk size field does.
const (
	chunkHeaderSize = 8
	riffHeaderSize  = 12 // "RIFF", size, "WAVE"
	fmtPCMSize      = 16
	fmtFloatSize    = 18 // WAVEFORMATEX with cbSize 0
	fmtExtSize      = 40 // WAVEFORMATEXTENSIBLE, cbSize 22
	factSize        = 4
	smplBaseSize    = 36
	smplLoopSize    = 24
	instSize        = 7
)

// Format tags and the WAVEFORMATEXTENSIBLE fields that go with them.
const (
	tagPCM        = 0x0001
	tagFloat      = 0x0003
	tagExtensible = 0xFFFE
	extCbSize     = 22
	maskMono      = 0x4 // front centre
	maskStereo    = 0x3 // front left, front right
)

// guidTail is the part of the KSDATAFORMAT_SUBTYPE_* GUIDs after their
// leading 2-byte format code, as stored on disk.
var guidTail = [14]byte{0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71}

// maxFileSize is the largest file whose RIFF size (file length − 8) fits the
// 32-bit chunk size field.
const maxFileSize = math.MaxUint32 + chunkHeaderSize

// Encode writes a complete WAV file holding samples: interleaved frames, full
// scale ±1.0. The length of samples must be a multiple of Channels. If the
// options or the sample count are invalid, or the file would not fit the
// 4 GiB RIFF limit, Encode returns an OptionsError and writes nothing.
func Encode(w io.Writer, samples []float64, opts Options) error {
	frames := 0
	if opts.Channels == 1 || opts.Channels == 2 {
		if len(samples)%opts.Channels != 0 {
			return OptionsError(fmt.Sprintf("%d samples do not make whole %d-channel frames", len(samples), opts.Channels))
		}
		frames = len(samples) / opts.Channels
	}
	size, err := layout(frames, opts)
	if err != nil {
		return err
	}
	dataBytes := len(samples) * (opts.BitDepth / 8)
	if _, err := w.Write(header(size, frames, dataBytes, opts)); err != nil {
		return err
	}
	if err := writeSamples(w, samples, opts); err != nil {
		return err
	}
	_, err = w.Write(trailer(dataBytes, opts))
	return err
}

// Size returns the exact number of bytes Encode writes for frames frames with
// opts, so a caller can report it before rendering. It returns 0, the number
// of bytes Encode writes then, if Encode would reject frames or opts.
func Size(frames int, opts Options) int64 {
	size, err := layout(frames, opts)
	if err != nil {
		return 0
	}
	return size
}

// layout validates frames and opts and returns the file size.
func layout(frames int, opts Options) (int64, error) {
	if err := validate(frames, opts); err != nil {
		return 0, err
	}
	// Checking frames alone first keeps the products below from overflowing.
	size := int64(maxFileSize + 1)
	if int64(frames) <= maxFileSize {
		dataBytes := int64(frames) * int64(opts.Channels) * int64(opts.BitDepth/8)
		size = int64(headerSize(opts.BitDepth)) + dataBytes + dataBytes%2 + int64(metadataSize(opts))
	}
	if size > maxFileSize {
		return 0, OptionsError(fmt.Sprintf("%d frames make the file larger than the %d bytes RIFF sizes allow", frames, int64(maxFileSize)))
	}
	return size, nil
}

func validate(frames int, opts Options) error {
	switch {
	case opts.BitDepth != 16 && opts.BitDepth != 24 && opts.BitDepth != 32:
		return OptionsError(fmt.Sprintf("bit depth %d not supported (16, 24 or 32)", opts.BitDepth))
	case opts.Channels != 1 && opts.Channels != 2:
		return OptionsError(fmt.Sprintf("%d channels not supported (1 or 2)", opts.Channels))
	case opts.SampleRate < 1 || int64(opts.SampleRate)*int64(opts.Channels*opts.BitDepth/8) > math.MaxUint32:
		// The fmt chunk stores the byte rate in 32 bits too.
		return OptionsError(fmt.Sprintf("sample rate %d Hz out of range (1 to %d for this format)",
			opts.SampleRate, math.MaxUint32/int64(opts.Channels*opts.BitDepth/8)))
	case frames < 0:
		return OptionsError(fmt.Sprintf("negative frame count %d", frames))
	}
	// Range checks on the metadata report caller mistakes here rather than
	// as a sampler that silently mistunes, maps wrongly or drops a loop.
	if s := opts.Sampler; s != nil {
		if s.UnityNote > 127 {
			return OptionsError(fmt.Sprintf("smpl unity note %d out of MIDI range 0 to 127", s.UnityNote))
		}
		for i, l := range s.Loops {
			if l.Start > l.End || int64(l.End) >= int64(frames) {
				return OptionsError(fmt.Sprintf("smpl loop %d [%d, %d] not within frames 0 to %d (End is inclusive)", i, l.Start, l.End, frames-1))
			}
		}
	}
	if in := opts.Instrument; in != nil {
		for _, n := range [...]struct {
			name  string
			value uint8
		}{
			{"unshifted note", in.UnshiftedNote}, {"low note", in.LowNote}, {"high note", in.HighNote},
			{"low velocity", in.LowVelocity}, {"high velocity", in.HighVelocity},
		} {
			if n.value > 127 {
				return OptionsError(fmt.Sprintf("inst %s %d out of MIDI range 0 to 127", n.name, n.value))
			}
		}
		if in.FineTune < -50 || in.FineTune > 50 {
			return OptionsError(fmt.Sprintf("inst fine tune %d cents out of range -50 to 50", in.FineTune))
		}
	}
	return nil
}

// headerSize is the length of everything before the samples: the RIFF
// header, the format chunks and the data chunk header.
func headerSize(bitDepth int) int {
	n := riffHeaderSize + chunkHeaderSize + chunkHeaderSize
	switch bitDepth {
	case 16:
		n += fmtPCMSize
	case 24:
		n += fmtExtSize
	case 32:
		n += fmtFloatSize + chunkHeaderSize + factSize
	}
	return n
}

// header returns everything before the samples.
func header(fileSize int64, frames, dataBytes int, opts Options) []byte {
	le := binary.LittleEndian
	blockAlign := opts.Channels * opts.BitDepth / 8
	b := make([]byte, 0, headerSize(opts.BitDepth))
	b = append(b, "RIFF"...)
	b = le.AppendUint32(b, uint32(fileSize-chunkHeaderSize))
	b = append(b, "WAVE"...)

	b = append(b, "fmt "...)
	switch opts.BitDepth {
	case 16:
		b = le.AppendUint32(b, fmtPCMSize)
		b = le.AppendUint16(b, tagPCM)
	case 24:
		// The WAVE standard asks for WAVE_FORMAT_EXTENSIBLE whenever PCM
		// samples have more than 16 bits; some players refuse 24-bit
		// WAVE_FORMAT_PCM.
		b = le.AppendUint32(b, fmtExtSize)
		b = le.AppendUint16(b, tagExtensible)
	case 32:
		b = le.AppendUint32(b, fmtFloatSize)
		b = le.AppendUint16(b, tagFloat)
	}
	b = le.AppendUint16(b, uint16(opts.Channels))
	b = le.AppendUint32(b, uint32(opts.SampleRate))
	b = le.AppendUint32(b, uint32(opts.SampleRate*blockAlign))
	b = le.AppendUint16(b, uint16(blockAlign))
	b = le.AppendUint16(b, uint16(opts.BitDepth))
	switch opts.BitDepth {
	case 24:
		mask := uint32(maskMono)
		if opts.Channels == 2 {
			mask = maskStereo
		}
		b = le.AppendUint16(b, extCbSize)
		b = le.AppendUint16(b, uint16(opts.BitDepth)) // wValidBitsPerSample: every container bit is used
		b = le.AppendUint32(b, mask)
		b = le.AppendUint16(b, tagPCM) // SubFormat KSDATAFORMAT_SUBTYPE_PCM
		b = append(b, guidTail[:]...)
	case 32:
		b = le.AppendUint16(b, 0) // cbSize
		// Every non-PCM format needs a fact chunk. Its value counts frames
		// (samples per channel), following the WAVE standard's text rather
		// than its example table.
		b = append(b, "fact"...)
		b = le.AppendUint32(b, factSize)
		b = le.AppendUint32(b, uint32(frames))
	}

	b = append(b, "data"...)
	return le.AppendUint32(b, uint32(dataBytes))
}

// metadataSize is the length of the smpl and inst chunks in opts.
func metadataSize(opts Options) int {
	n := 0
	if s := opts.Sampler; s != nil {
		n += chunkHeaderSize + smplBaseSize + smplLoopSize*len(s.Loops)
	}
	if opts.Instrument != nil {
		n += chunkHeaderSize + instSize + 1 // inst is odd-sized: pad byte
	}
	return n
}

// trailer returns everything after the samples: the data chunk's pad byte if
// dataBytes is odd, then the smpl and inst chunks.
func trailer(dataBytes int, opts Options) []byte {
	le := binary.LittleEndian
	b := make([]byte, 0, 1+metadataSize(opts))
	if dataBytes%2 == 1 {
		b = append(b, 0)
	}
	if s := opts.Sampler; s != nil {
		b = append(b, "smpl"...)
		b = le.AppendUint32(b, uint32(smplBaseSize+smplLoopSize*len(s.Loops)))
		b = le.AppendUint32(b, 0) // manufacturer: none
		b = le.AppendUint32(b, 0) // product: none
		b = le.AppendUint32(b, uint32(1_000_000_000/opts.SampleRate))
		b = le.AppendUint32(b, uint32(s.UnityNote))
		b = le.AppendUint32(b, s.PitchFraction)
		b = le.AppendUint32(b, 0) // SMPTE format: none
		b = le.AppendUint32(b, 0) // SMPTE offset
		b = le.AppendUint32(b, uint32(len(s.Loops)))
		b = le.AppendUint32(b, 0) // no sampler-specific data
		for i, l := range s.Loops {
			b = le.AppendUint32(b, uint32(i)) // identifier
			b = le.AppendUint32(b, 0)         // type: forward
			b = le.AppendUint32(b, l.Start)
			b = le.AppendUint32(b, l.End)
			b = le.AppendUint32(b, 0) // fraction
			b = le.AppendUint32(b, 0) // play count: endless
		}
	}
	if in := opts.Instrument; in != nil {
		b = append(b, "inst"...)
		b = le.AppendUint32(b, instSize)
		b = append(b, in.UnshiftedNote, byte(in.FineTune), byte(in.Gain),
			in.LowNote, in.HighNote, in.LowVelocity, in.HighVelocity, 0)
	}
	return b
}

// packSamples is how many samples are packed per Write: 8192 stereo frames.
const packSamples = 8192 * 2

// packBuffers holds packing buffers big enough for packSamples samples of
// the widest format, so concurrent Encode calls share no buffer.
var packBuffers = sync.Pool{New: func() any { return new([packSamples * 4]byte) }}

// writeSamples packs samples in blocks of packSamples and writes each
// block. The kernel package quantises and packs in one pass, with the
// widest instruction set the processor has; every set gives the same
// bytes. The dither counts from each sample's index in the whole file.
func writeSamples(w io.Writer, samples []float64, opts Options) error {
	buf := packBuffers.Get().(*[packSamples * 4]byte)
	defer packBuffers.Put(buf)
	pcm := kernel.PCM{Bits: opts.BitDepth, Dither: opts.Dither, Seed: opts.DitherSeed}
	for first := 0; first < len(samples); first += packSamples {
		block := samples[first:min(len(samples), first+packSamples)]
		var packed []byte
		if opts.BitDepth == 32 {
			packed = kernel.PackFloat32(buf[:], block)
		} else {
			packed = kernel.PackPCM(buf[:], block, pcm, uint64(first))
		}
		if _, err := w.Write(packed); err != nil {
			return err
		}
	}
	return nil
}
