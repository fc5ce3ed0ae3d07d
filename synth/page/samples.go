package page

import (
	"bytes"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strings"

	mewflac "github.com/mewkiz/flac"

	"sinter/synth/wav"
)

// readSamples reads a set's WAV or FLAC file as full-scale ±1 floats,
// interleaved, with its channel count and rate.
func readSamples(path string) (data []float64, channels, rate int, err error) {
	raw, err := os.ReadFile(path)
	if err != nil {
		return nil, 0, 0, err
	}
	if strings.HasSuffix(strings.ToLower(path), ".flac") {
		return flacSamples(raw)
	}
	info, err := wav.Inspect(raw)
	if err != nil {
		return nil, 0, 0, fmt.Errorf("%s: %w", path, err)
	}
	body, err := dataChunk(raw)
	if err != nil {
		return nil, 0, 0, fmt.Errorf("%s: %w", path, err)
	}
	n := info.Frames * info.Channels
	data = make([]float64, n)
	switch info.BitDepth {
	case 16:
		for i := range data {
			data[i] = float64(int16(binary.LittleEndian.Uint16(body[2*i:]))) / (1 << 15)
		}
	case 24:
		for i := range data {
			b := body[3*i:]
			data[i] = float64(int32(uint32(b[0])<<8|uint32(b[1])<<16|uint32(b[2])<<24)>>8) / (1 << 23)
		}
	case 32:
		for i := range data {
			data[i] = float64(math.Float32frombits(binary.LittleEndian.Uint32(body[4*i:])))
		}
	}
	return data, info.Channels, info.SampleRate, nil
}

// dataChunk returns the body of a WAV file's data chunk, which wav.Inspect
// has checked is whole.
func dataChunk(raw []byte) ([]byte, error) {
	for off := 12; off+8 <= len(raw); {
		size := int(binary.LittleEndian.Uint32(raw[off+4:]))
		if string(raw[off:off+4]) == "data" && off+8+size <= len(raw) {
			return raw[off+8 : off+8+size], nil
		}
		off += 8 + size + size%2
	}
	return nil, errors.New("no data chunk")
}

// flacSamples decodes a FLAC stream with mewkiz/flac.
func flacSamples(raw []byte) (data []float64, channels, rate int, err error) {
	stream, err := mewflac.New(bytes.NewReader(raw))
	if err != nil {
		return nil, 0, 0, err
	}
	scale := 1 / float64(int64(1)<<(stream.Info.BitsPerSample-1))
	for {
		f, err := stream.ParseNext()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, 0, 0, err
		}
		for i := range f.Subframes[0].NSamples {
			for _, sub := range f.Subframes {
				data = append(data, float64(sub.Samples[i])*scale)
			}
		}
	}
	return data, int(stream.Info.NChannels), int(stream.Info.SampleRate), nil
}
