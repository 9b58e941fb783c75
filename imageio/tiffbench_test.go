package imageio

import (
	"bufio"
	"encoding/binary"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"testing"
	"time"
)

// writeLargeGray16TIFF writes a side x side 16-bit gray TIFF,
// uncompressed, little-endian, in strips of 64 rows (TIFF 6.0 baseline:
// header, pixel strips, then the directory with its offset and count
// arrays), a row at a time, with a gradient and a disc pattern. It is
// generated per run, never committed.
func writeLargeGray16TIFF(b *testing.B, side int) string {
	b.Helper()
	path := filepath.Join(b.TempDir(), "large16.tif")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	w := bufio.NewWriterSize(f, 1<<20)
	le := binary.LittleEndian
	const rps = 64
	strips := (side + rps - 1) / rps
	w.Write([]byte("II*\x00"))
	rowBytes := 2 * side
	data := int64(8)
	ifd := data + int64(rowBytes)*int64(side)
	binary.Write(w, le, uint32(ifd))
	row := make([]byte, rowBytes)
	for y := 0; y < side; y++ {
		for x := 0; x < side; x++ {
			v := 8000 + (x+y)%20000
			if dx, dy := x%128-64, y%128-64; dx*dx+dy*dy < 900 {
				v += 20000
			}
			le.PutUint16(row[2*x:], uint16(v))
		}
		w.Write(row)
	}
	const n = 9
	arrays := ifd + 2 + 12*n + 4
	entry := func(tag, typ uint16, count, value uint32) {
		binary.Write(w, le, tag)
		binary.Write(w, le, typ)
		binary.Write(w, le, count)
		binary.Write(w, le, value)
	}
	binary.Write(w, le, uint16(n))
	entry(256, 4, 1, uint32(side))
	entry(257, 4, 1, uint32(side))
	entry(258, 3, 1, 16)
	entry(259, 3, 1, 1)
	entry(262, 3, 1, 1)
	entry(273, 4, uint32(strips), uint32(arrays))
	entry(277, 3, 1, 1)
	entry(278, 4, 1, rps)
	entry(279, 4, uint32(strips), uint32(arrays+4*int64(strips)))
	binary.Write(w, le, uint32(0))
	for s := 0; s < strips; s++ {
		binary.Write(w, le, uint32(data+int64(s)*rps*int64(rowBytes)))
	}
	for s := 0; s < strips; s++ {
		rows := min(rps, side-s*rps)
		binary.Write(w, le, uint32(rows*rowBytes))
	}
	if err := w.Flush(); err != nil {
		b.Fatal(err)
	}
	if err := f.Close(); err != nil {
		b.Fatal(err)
	}
	return path
}

// BenchmarkLoadLargeGray16TIFF reads a generated 16-bit TIFF of 100
// megapixels (CLEAVE_TIFF_BENCH_SIDE sets the side, default 10000)
// through Open and Decode, as the command does. It reports the file's
// MB/s (SetBytes), the bytes allocated per read (ReportAllocs), the live
// heap after the read (heap-MB: the decoded float32 plane, 4 bytes a
// pixel, and what else stays) and, for comparison, the MB/s of reading
// the same file with io.Copy into nothing (disk-MB/s; the file is
// usually in the page cache by then).
func BenchmarkLoadLargeGray16TIFF(b *testing.B) {
	side := 10000
	if s, err := strconv.Atoi(os.Getenv("CLEAVE_TIFF_BENCH_SIDE")); err == nil && s > 0 {
		side = s
	}
	path := writeLargeGray16TIFF(b, side)
	st, err := os.Stat(path)
	if err != nil {
		b.Fatal(err)
	}
	t0 := time.Now()
	f, err := os.Open(path)
	if err != nil {
		b.Fatal(err)
	}
	if _, err := io.Copy(io.Discard, f); err != nil {
		b.Fatal(err)
	}
	f.Close()
	disk := float64(st.Size()) / 1e6 / time.Since(t0).Seconds()
	b.SetBytes(st.Size())
	b.ReportAllocs()
	var heap float64
	b.ResetTimer()
	for b.Loop() {
		im, err := Load(path, LoadOptions{MaxMegapixels: MaxMaxMegapixels})
		if err != nil {
			b.Fatal(err)
		}
		b.StopTimer()
		var ms runtime.MemStats
		runtime.GC()
		runtime.ReadMemStats(&ms)
		heap = float64(ms.HeapAlloc) / 1e6
		runtime.KeepAlive(im)
		b.StartTimer()
	}
	b.ReportMetric(heap, "heap-MB")
	b.ReportMetric(disk, "disk-MB/s")
}
