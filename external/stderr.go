package external

import (
	"bufio"
	"io"
	"sync"
)

// copyLines copies r to w line by line, each line prefixed by prefix and
// written by one call to w.Write while mu is held. A line longer than the
// buffer is cut into pieces, each written as a line; a last line without a
// newline gets one.
func copyLines(w io.Writer, mu *sync.Mutex, r io.Reader, prefix string) {
	br := bufio.NewReaderSize(r, 16<<10)
	buf := make([]byte, 0, 256)
	for {
		frag, err := br.ReadSlice('\n')
		if len(frag) > 0 {
			buf = append(append(buf[:0], prefix...), frag...)
			if buf[len(buf)-1] != '\n' {
				buf = append(buf, '\n')
			}
			mu.Lock()
			w.Write(buf)
			mu.Unlock()
		}
		if err != nil && err != bufio.ErrBufferFull {
			return
		}
	}
}
