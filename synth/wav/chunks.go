package wav

import "encoding/binary"

// Chunks returns the sampler chunks Encode writes after the samples — smpl
// and inst, as opts asks for them, each a complete RIFF chunk with its
// header and pad byte — for containers that carry RIFF chunks beside audio
// of their own, such as FLAC's APPLICATION "riff" blocks. Options are not
// checked here; Encode's checks apply to the file the chunks describe.
func Chunks(opts Options) []byte { return trailer(0, opts) }

// InspectChunks reads a run of RIFF chunks, as Chunks writes them, and
// returns the smpl and inst contents with the checks Inspect applies to
// them; other chunks are skipped. Offsets in errors count from data[0].
func InspectChunks(data []byte) (Info, error) {
	var info Info
	for off := 0; off < len(data); {
		if len(data)-off < chunkHeaderSize {
			return info, formatError(off, "%d bytes left, too few for a chunk header (8)", len(data)-off)
		}
		id := string(data[off : off+4])
		size := int64(binary.LittleEndian.Uint32(data[off+4:]))
		if size > int64(len(data)-off-chunkHeaderSize) {
			return info, formatError(off+4, "%s chunk of %d bytes, only %d follow", id, size, len(data)-off-chunkHeaderSize)
		}
		body := data[off+chunkHeaderSize : off+chunkHeaderSize+int(size)]
		var err error
		switch id {
		case "smpl":
			err = parseSampler(&info, body, off)
		case "inst":
			err = parseInstrument(&info, body, off)
		}
		if err != nil {
			return info, err
		}
		off += chunkHeaderSize + int(size) + int(size%2)
	}
	return info, nil
}
