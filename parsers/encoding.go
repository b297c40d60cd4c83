package parsers

import (
	"bytes"
	"fmt"
	"unicode"
	"unicode/utf8"

	"golang.org/x/text/encoding"
	"golang.org/x/text/encoding/charmap"
	xunicode "golang.org/x/text/encoding/unicode"
)

// Encodings a spec may declare; "auto" (the default) detects.
const (
	EncodingAuto        = "auto"
	EncodingUTF8        = "utf-8"
	EncodingUTF16LE     = "utf-16le"
	EncodingUTF16BE     = "utf-16be"
	EncodingWindows1252 = "windows-1252"
	EncodingLatin1      = "latin-1"
)

var encodings = map[string]encoding.Encoding{
	EncodingUTF16LE:     xunicode.UTF16(xunicode.LittleEndian, xunicode.UseBOM),
	EncodingUTF16BE:     xunicode.UTF16(xunicode.BigEndian, xunicode.UseBOM),
	EncodingWindows1252: charmap.Windows1252,
	EncodingLatin1:      charmap.ISO8859_1,
}

func knownEncoding(s string) bool {
	_, ok := encodings[s]
	return ok || s == EncodingAuto || s == EncodingUTF8 || s == ""
}

// decodeText turns a file's bytes into text, by the declared encoding or,
// with "auto", by detection: a byte-order mark says UTF-8 or UTF-16 (as
// Windows instrument software writes); otherwise valid UTF-8 is UTF-8, a
// file with zero bytes in every other position is UTF-16 without a mark,
// and anything else is taken as Windows-1252 (which covers Latin-1's
// printable characters). It returns the text, the encoding used, and
// ErrBinary when the result is not text: control characters other than
// tab, line feed, carriage return and form feed mean a binary file.
func decodeText(name string, data []byte, declared string) (string, string, error) {
	if len(bytes.TrimSpace(data)) == 0 {
		return "", "", perr(name, 0, 0, ErrEmpty)
	}
	enc := declared
	if enc == "" || enc == EncodingAuto {
		enc = detect(data)
	}
	var text string
	switch enc {
	case EncodingUTF8:
		b := bytes.TrimPrefix(data, []byte("\xEF\xBB\xBF"))
		if i := firstInvalidUTF8(b); i >= 0 {
			return "", enc, perr(name, lineAt(b, i), 0, fmt.Errorf("%w: byte 0x%02X at offset %d is not UTF-8 (declare the file's encoding?)", ErrBinary, b[i], i))
		}
		text = string(b)
	default:
		e, ok := encodings[enc]
		if !ok {
			return "", enc, perr(name, 0, 0, fmt.Errorf("unknown encoding %q", enc))
		}
		out, err := e.NewDecoder().Bytes(data)
		if err != nil {
			return "", enc, perr(name, 0, 0, fmt.Errorf("%w: cannot decode as %s: %v", ErrBinary, enc, err))
		}
		text = string(bytes.TrimPrefix(out, []byte("\xEF\xBB\xBF")))
	}
	line := 1
	for i, r := range text {
		switch {
		case r == '\n':
			line++
		case r == '\t' || r == '\r' || r == '\f':
		case r == utf8.RuneError || (unicode.IsControl(r) && r < 0xA0):
			return "", enc, perr(name, line, 0, fmt.Errorf("%w: control character U+%04X at offset %d (read as %s)", ErrBinary, r, i, enc))
		}
	}
	return text, enc, nil
}

func detect(data []byte) string {
	switch {
	case bytes.HasPrefix(data, []byte("\xEF\xBB\xBF")):
		return EncodingUTF8
	case bytes.HasPrefix(data, []byte("\xFF\xFE")):
		return EncodingUTF16LE
	case bytes.HasPrefix(data, []byte("\xFE\xFF")):
		return EncodingUTF16BE
	case utf8.Valid(data):
		return EncodingUTF8
	}
	// UTF-16 without a mark: ASCII text has a zero in every other byte.
	if len(data) >= 4 {
		var evenZero, oddZero int
		for i, b := range data {
			if b == 0 {
				if i%2 == 0 {
					evenZero++
				} else {
					oddZero++
				}
			}
		}
		half := len(data) / 2
		switch {
		case oddZero > half*9/10 && evenZero == 0:
			return EncodingUTF16LE
		case evenZero > half*9/10 && oddZero == 0:
			return EncodingUTF16BE
		}
	}
	return EncodingWindows1252
}

func firstInvalidUTF8(b []byte) int {
	for i := 0; i < len(b); {
		r, n := utf8.DecodeRune(b[i:])
		if r == utf8.RuneError && n == 1 {
			return i
		}
		i += n
	}
	return -1
}

func lineAt(b []byte, off int) int { return bytes.Count(b[:off], []byte("\n")) + 1 }
