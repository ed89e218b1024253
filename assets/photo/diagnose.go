package photo

import (
	"bufio"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"io"
	"os"
)

// diagnose looks again at a file that failed to decode and, where it can,
// says where it goes wrong: the PNG chunk with a bad CRC or cut short, the
// end of a JPEG without its end-of-image marker, a TIFF directory beyond
// the end of the file. It returns "" when it finds nothing more specific
// than the decoder's message.
func diagnose(f *os.File, format string) string {
	st, err := f.Stat()
	if err != nil {
		return ""
	}
	size := st.Size()
	switch format {
	case "png":
		return diagnosePNG(f, size)
	case "jpeg":
		if size < 2 {
			return fmt.Sprintf("truncated JPEG file: it ends at byte %d", size)
		}
		tail := make([]byte, 2)
		if _, err := f.ReadAt(tail, size-2); err == nil && (tail[0] != 0xff || tail[1] != 0xd9) {
			return fmt.Sprintf("truncated JPEG file: it ends at byte %d without the end-of-image marker FF D9", size)
		}
	case "tiff":
		head := make([]byte, 8)
		if _, err := f.ReadAt(head, 0); err != nil {
			return fmt.Sprintf("truncated TIFF file: the 8-byte header is cut short (%d bytes)", size)
		}
		var bo binary.ByteOrder = binary.LittleEndian
		if head[0] == 'M' {
			bo = binary.BigEndian
		}
		if off := int64(bo.Uint32(head[4:])); off+2 > size {
			return fmt.Sprintf("TIFF header at byte 4 points to the image directory at byte %d, beyond the end of the file (%d bytes)", off, size)
		}
	}
	return ""
}

// diagnosePNG walks the chunks of a PNG file (W3C PNG specification,
// section 5.3: length, type, data, CRC-32 of type and data).
func diagnosePNG(f *os.File, size int64) string {
	r := bufio.NewReaderSize(io.NewSectionReader(f, 0, size), 1<<16)
	if _, err := r.Discard(8); err != nil {
		return ""
	}
	off := int64(8)
	var hdr [8]byte
	buf := make([]byte, 1<<16)
	for off < size {
		if size-off < 12 {
			return fmt.Sprintf("truncated PNG file: %d stray bytes at byte %d where a chunk (at least 12 bytes) should start", size-off, off)
		}
		if _, err := io.ReadFull(r, hdr[:]); err != nil {
			return ""
		}
		n := int64(binary.BigEndian.Uint32(hdr[:4]))
		typ := string(hdr[4:8])
		if off+12+n > size {
			return fmt.Sprintf("truncated PNG file: chunk %q at byte %d declares %d data bytes, but the file ends at byte %d", typ, off, n, size)
		}
		crc := crc32.NewIEEE()
		crc.Write(hdr[4:8])
		for left := n; left > 0; {
			k := min(left, int64(len(buf)))
			if _, err := io.ReadFull(r, buf[:k]); err != nil {
				return ""
			}
			crc.Write(buf[:k])
			left -= k
		}
		var stored [4]byte
		if _, err := io.ReadFull(r, stored[:]); err != nil {
			return ""
		}
		if s := binary.BigEndian.Uint32(stored[:]); s != crc.Sum32() {
			return fmt.Sprintf("chunk %q at byte %d: CRC mismatch (stored %08x, computed %08x): the file is corrupt", typ, off, s, crc.Sum32())
		}
		if typ == "IEND" {
			return ""
		}
		off += 12 + n
	}
	return fmt.Sprintf("truncated PNG file: it ends at byte %d without an IEND chunk", size)
}
