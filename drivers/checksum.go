package drivers

import (
	"bytes"
	"encoding/hex"
	"fmt"
	"slices"
	"strings"
)

// A Checksum says how an instrument protects its messages. Kind is one of
//
//	sum8          the sum of the covered bytes, modulo 256
//	xor8          the exclusive-or of the covered bytes
//	crc16-modbus  CRC-16 as Modbus RTU uses it (polynomial 0x8005 reflected, initial 0xFFFF)
//
// Form is how the value is written: "hex" (the default: two upper-case hex
// digits for the 8-bit kinds, four for the CRC, high digit first) or "raw"
// (the bytes themselves; the CRC low byte first, as in Modbus RTU). The
// checksum covers the message from byte Skip (0: from the first byte, 1:
// after a start character) up to where the checksum stands: the {cs}
// placeholder in a send string, the (?P<cs>...) group in a reply.
type Checksum struct {
	Kind string
	Form string
	Skip int
}

var checksumKinds = []string{"sum8", "xor8", "crc16-modbus"}

// Validate reports every problem with the checksum settings.
func (c Checksum) Validate() error {
	var problems []string
	if !slices.Contains(checksumKinds, c.Kind) {
		problems = append(problems, fmt.Sprintf("kind: unknown checksum %q (known: %s)", c.Kind, strings.Join(checksumKinds, ", ")))
	}
	if c.Form != "" && c.Form != "hex" && c.Form != "raw" {
		problems = append(problems, fmt.Sprintf("form: unknown form %q (known: hex, raw)", c.Form))
	}
	if c.Skip < 0 {
		problems = append(problems, fmt.Sprintf("skip: must not be negative, got %d", c.Skip))
	}
	if len(problems) > 0 {
		return fmt.Errorf("%s", strings.Join(problems, "; "))
	}
	return nil
}

// Sum8 returns the sum of b modulo 256.
func Sum8(b []byte) byte {
	var s byte
	for _, c := range b {
		s += c
	}
	return s
}

// XOR8 returns the exclusive-or of the bytes of b.
func XOR8(b []byte) byte {
	var s byte
	for _, c := range b {
		s ^= c
	}
	return s
}

// CRC16Modbus returns the CRC-16/MODBUS of b (reflected polynomial 0xA001,
// initial value 0xFFFF, no final exclusive-or).
func CRC16Modbus(b []byte) uint16 {
	crc := uint16(0xFFFF)
	for _, c := range b {
		crc ^= uint16(c)
		for range 8 {
			if crc&1 != 0 {
				crc = crc>>1 ^ 0xA001
			} else {
				crc >>= 1
			}
		}
	}
	return crc
}

// encode returns the checksum of covered, written in the configured form.
func (c Checksum) encode(covered []byte) []byte {
	var raw []byte
	switch c.Kind {
	case "sum8":
		raw = []byte{Sum8(covered)}
	case "xor8":
		raw = []byte{XOR8(covered)}
	case "crc16-modbus":
		v := CRC16Modbus(covered)
		if c.Form == "raw" {
			return []byte{byte(v), byte(v >> 8)}
		}
		raw = []byte{byte(v >> 8), byte(v)}
	}
	if c.Form == "raw" {
		return raw
	}
	return []byte(strings.ToUpper(hex.EncodeToString(raw)))
}

// cover returns the bytes of msg the checksum covers when it stands at end.
func (c Checksum) cover(msg []byte, end int) ([]byte, error) {
	if c.Skip > end {
		return nil, fmt.Errorf("checksum skips %d bytes but stands at byte %d", c.Skip, end)
	}
	return msg[c.Skip:end], nil
}

// verify checks the checksum text got, found at msg[end:], against msg.
func (c Checksum) verify(msg []byte, end int, got []byte) error {
	covered, err := c.cover(msg, end)
	if err != nil {
		return err
	}
	want := c.encode(covered)
	if c.Form == "raw" && bytes.Equal(got, want) || c.Form != "raw" && bytes.EqualFold(got, want) {
		return nil
	}
	return fmt.Errorf("checksum mismatch: reply carries %q, %s of %q is %q", got, c.Kind, covered, want)
}
