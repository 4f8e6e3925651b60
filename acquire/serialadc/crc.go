package serialadc

// CRC-16/CCITT-FALSE parameters: polynomial x^16 + x^12 + x^5 + 1 (0x1021),
// initial value 0xFFFF, no reflection, no final XOR. Catalogued by R. Ewing,
// "Catalogue of parametrised CRC algorithms" (reveng), where it is listed as
// CRC-16/IBM-3740 with the alias CRC-16/CCITT-FALSE and check value 0x29B1.
const (
	crcPoly = 0x1021
	crcInit = 0xFFFF
)

// CRC16 returns the CRC-16/CCITT-FALSE of p (poly 0x1021, init 0xFFFF, no
// reflection, no final XOR), the checksum of the binary packet format. It
// works bit by bit, exactly as the firmware does; CRC16("123456789") is
// 0x29B1.
func CRC16(p []byte) uint16 {
	return UpdateCRC16(crcInit, p)
}

// UpdateCRC16 continues a CRC-16/CCITT-FALSE computation: crc is the value
// so far (0xFFFF before the first byte) and the result covers p as well.
func UpdateCRC16(crc uint16, p []byte) uint16 {
	for _, b := range p {
		crc ^= uint16(b) << 8
		for range 8 {
			if crc&0x8000 != 0 {
				crc = crc<<1 ^ crcPoly
			} else {
				crc <<= 1
			}
		}
	}
	return crc
}

// crcTable is the byte-at-a-time table for CRC-16/CCITT-FALSE: entry i is
// the CRC register after shifting the byte i through a zero register.
type crcTable [256]uint16

// newCRCTable builds the table from the bitwise definition.
func newCRCTable() *crcTable {
	t := new(crcTable)
	for i := range t {
		crc := uint16(i) << 8
		for range 8 {
			if crc&0x8000 != 0 {
				crc = crc<<1 ^ crcPoly
			} else {
				crc <<= 1
			}
		}
		t[i] = crc
	}
	return t
}

// checksum computes CRC16(p) with the table (same result, ~8× fewer steps).
func (t *crcTable) checksum(p []byte) uint16 {
	crc := uint16(crcInit)
	for _, b := range p {
		crc = crc<<8 ^ t[byte(crc>>8)^b]
	}
	return crc
}
