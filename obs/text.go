package obs

import (
	"bufio"
	"bytes"
	"fmt"
	"io"
)

// textReader returns r for reading a text table, or an error naming the
// encoding when the file is not ASCII or UTF-8 text: a UTF-16 or UTF-32
// byte-order mark, or NUL bytes among the first bytes (UTF-16 without a
// mark, as some spreadsheet programs save "Unicode text"). A UTF-8
// byte-order mark is left for the parser, which skips it.
func textReader(r io.Reader, path string) (io.Reader, error) {
	br := bufio.NewReader(r)
	head, _ := br.Peek(512)
	for _, enc := range []struct {
		bom  []byte
		name string
	}{
		{[]byte{0xFF, 0xFE, 0, 0}, "UTF-32 (little-endian)"},
		{[]byte{0, 0, 0xFE, 0xFF}, "UTF-32 (big-endian)"},
		{[]byte{0xFF, 0xFE}, "UTF-16 (little-endian)"},
		{[]byte{0xFE, 0xFF}, "UTF-16 (big-endian)"},
	} {
		if bytes.HasPrefix(head, enc.bom) {
			return nil, fmt.Errorf("%s: the file is %s text (byte-order mark % X); save it as UTF-8 or ASCII text", path, enc.name, enc.bom)
		}
	}
	if i := bytes.IndexByte(head, 0); i >= 0 {
		enc := "UTF-16 or another multi-byte encoding"
		if i%2 == 1 {
			enc = "UTF-16 (little-endian) without a byte-order mark"
		} else if len(head) > i+1 && head[i+1] != 0 {
			enc = "UTF-16 (big-endian) without a byte-order mark"
		}
		return nil, fmt.Errorf("%s: the file holds NUL bytes (the first is byte %d): it is %s, not UTF-8 or ASCII text; save it as UTF-8 or ASCII text", path, i+1, enc)
	}
	return br, nil
}
