package flac

// bitWriter appends bits, most significant first, to a byte slice, as
// every field of a FLAC stream is written (RFC 9639, section 5: "all
// numbers are big-endian", and bits fill each byte from the top).
type bitWriter struct {
	buf  []byte
	acc  uint64 // pending bits, right-aligned
	bits uint   // how many bits acc holds, below 8 between calls
}

// write appends the low n bits of v, n at most 56.
func (w *bitWriter) write(v uint64, n uint) {
	w.acc = w.acc<<n | v&(1<<n-1)
	w.bits += n
	for w.bits >= 8 {
		w.bits -= 8
		w.buf = append(w.buf, byte(w.acc>>w.bits))
	}
}

// writeSigned appends v as an n-bit two's complement number.
func (w *bitWriter) writeSigned(v int64, n uint) { w.write(uint64(v), n) }

// writeUnary appends q zero bits and a one: the quotient of a Rice code
// (RFC 9639, section 9.2.7).
func (w *bitWriter) writeUnary(q uint64) {
	for q >= 32 {
		w.write(0, 32)
		q -= 32
	}
	w.write(1, uint(q)+1)
}

// align pads with zero bits to the next byte.
func (w *bitWriter) align() {
	if w.bits > 0 {
		w.write(0, 8-w.bits)
	}
}

// crc8Table and crc16Table are the frame header's CRC-8 (polynomial
// x^8 + x^2 + x + 1, 0x07) and the frame's CRC-16 (x^16 + x^15 + x^2 + 1,
// 0x8005), both initialised with 0 and unreflected (RFC 9639, sections
// 9.1.8 and 9.3).
var crc8Table, crc16Table = func() (t8 [256]uint8, t16 [256]uint16) {
	for i := range 256 {
		c8 := uint8(i)
		c16 := uint16(i) << 8
		for range 8 {
			c8 = c8<<1 ^ uint8(0x07&-(c8>>7))
			c16 = c16<<1 ^ 0x8005&-(c16>>15)
		}
		t8[i], t16[i] = c8, c16
	}
	return
}()

func crc8(b []byte) uint8 {
	var c uint8
	for _, x := range b {
		c = crc8Table[c^x]
	}
	return c
}

func crc16(b []byte) uint16 {
	var c uint16
	for _, x := range b {
		c = c<<8 ^ crc16Table[byte(c>>8)^x]
	}
	return c
}
