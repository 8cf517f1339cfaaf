package modbus

// crcTable is the byte-wise table of the Modbus CRC-16 (reflected polynomial 0xA001).
var crcTable = func() (t [256]uint16) {
	for i := range t {
		c := uint16(i)
		for range 8 {
			if c&1 != 0 {
				c = c>>1 ^ 0xA001
			} else {
				c >>= 1
			}
		}
		t[i] = c
	}
	return t
}()

// CRC returns the Modbus CRC-16 of b (initial value 0xFFFF). On the wire its low byte
// goes first.
func CRC(b []byte) uint16 {
	crc := uint16(0xFFFF)
	for _, x := range b {
		crc = crc>>8 ^ crcTable[byte(crc)^x]
	}
	return crc
}

// appendCRC appends the CRC of b to b, low byte first.
func appendCRC(b []byte) []byte {
	c := CRC(b)
	return append(b, byte(c), byte(c>>8))
}

// checkCRC reports whether a frame ends with the right CRC.
func checkCRC(frame []byte) bool {
	n := len(frame)
	if n < 4 {
		return false
	}
	c := CRC(frame[:n-2])
	return frame[n-2] == byte(c) && frame[n-1] == byte(c>>8)
}
