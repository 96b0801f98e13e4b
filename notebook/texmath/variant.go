package texmath

// Mathematical alphanumeric symbols (Unicode block U+1D400–U+1D7FF, with the
// letters that Unicode had encoded earlier in Letterlike Symbols). MathML
// Core styles only mathvariant="normal", so bold, script and double-struck
// letters are written as these characters instead.

type alphabet struct {
	upper, lower, digit    rune // first code point of A, a, 0 (0: none)
	greekUpper, greekLower rune
	holes                  map[rune]rune
}

var alphabets = map[variant]alphabet{
	vItalic: {upper: 0x1D434, lower: 0x1D44E, holes: map[rune]rune{'h': 0x210E}},
	vBold: {upper: 0x1D400, lower: 0x1D41A, digit: 0x1D7CE,
		greekUpper: 0x1D6A8, greekLower: 0x1D6C2},
	vBoldItalic: {upper: 0x1D468, lower: 0x1D482, digit: 0x1D7CE,
		greekUpper: 0x1D71C, greekLower: 0x1D736},
	vScript: {upper: 0x1D49C, lower: 0x1D4B6, holes: map[rune]rune{
		'B': 0x212C, 'E': 0x2130, 'F': 0x2131, 'H': 0x210B, 'I': 0x2110,
		'L': 0x2112, 'M': 0x2133, 'R': 0x211B, 'e': 0x212F, 'g': 0x210A, 'o': 0x2134}},
	vDouble: {upper: 0x1D538, lower: 0x1D552, digit: 0x1D7D8, holes: map[rune]rune{
		'C': 0x2102, 'H': 0x210D, 'N': 0x2115, 'P': 0x2119, 'Q': 0x211A,
		'R': 0x211D, 'Z': 0x2124}},
	vFraktur: {upper: 0x1D504, lower: 0x1D51E, holes: map[rune]rune{
		'C': 0x212D, 'H': 0x210C, 'I': 0x2111, 'R': 0x211C, 'Z': 0x2128}},
	vSans: {upper: 0x1D5A0, lower: 0x1D5BA, digit: 0x1D7E2},
	vMono: {upper: 0x1D670, lower: 0x1D68A, digit: 0x1D7F6},
}

// mapVariant writes s in the alphabet of v; characters the alphabet lacks
// are kept as they are.
func mapVariant(s string, v variant) string {
	a, ok := alphabets[v]
	if !ok {
		return s
	}
	out := make([]rune, 0, len(s))
	for _, r := range s {
		if h, ok := a.holes[r]; ok {
			out = append(out, h)
			continue
		}
		switch {
		case r >= 'A' && r <= 'Z' && a.upper != 0:
			r = a.upper + r - 'A'
		case r >= 'a' && r <= 'z' && a.lower != 0:
			r = a.lower + r - 'a'
		case r >= '0' && r <= '9' && a.digit != 0:
			r = a.digit + r - '0'
		case r >= 0x391 && r <= 0x3A9 && r != 0x3A2 && a.greekUpper != 0:
			r = a.greekUpper + r - 0x391
		case r >= 0x3B1 && r <= 0x3C9 && a.greekLower != 0:
			r = a.greekLower + r - 0x3B1
		}
		out = append(out, r)
	}
	return string(out)
}
