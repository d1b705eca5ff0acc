package tokens

// GPT-2's byte-level alphabet writes each byte as a visible character so that vocabulary files
// hold no control characters or spaces: the printable Latin-1 bytes ('!'..'~', '¡'..'¬',
// '®'..'ÿ') stand for themselves and the other 68 bytes, in ascending order, become U+0100
// onwards (byte 0 is U+0100, space is U+0120 'Ġ', newline U+010A 'Ċ').

// byteRune is the character that stands for byte b.
func byteRune(b byte) rune {
	switch {
	case selfByte(rune(b)):
		return rune(b)
	case b <= ' ':
		return 0x100 + rune(b)
	case b <= 0xA0: // 0x7F..0xA0 follow the 33 bytes 0x00..0x20
		return 0x100 + 33 + rune(b-0x7F)
	default: // 0xAD, the soft hyphen, is the last
		return 0x100 + 33 + 34
	}
}

// runeByte is the byte that character r stands for, and false when r is not in the alphabet.
func runeByte(r rune) (byte, bool) {
	switch {
	case selfByte(r):
		return byte(r), true
	case 0x100 <= r && r < 0x100+33:
		return byte(r - 0x100), true
	case 0x100+33 <= r && r < 0x100+33+34:
		return byte(r-0x100-33) + 0x7F, true
	case r == 0x100+33+34:
		return 0xAD, true
	}
	return 0, false
}

func selfByte(r rune) bool {
	return '!' <= r && r <= '~' || 0xA1 <= r && r <= 0xAC || 0xAE <= r && r <= 0xFF
}

// byteLevelDecode turns a vocabulary entry back into the bytes it stands for, and false when it
// holds a character outside the alphabet (such an entry can never be produced from text).
func byteLevelDecode(s string, dst []byte) ([]byte, bool) {
	for _, r := range s {
		b, ok := runeByte(r)
		if !ok {
			return dst, false
		}
		dst = append(dst, b)
	}
	return dst, true
}
