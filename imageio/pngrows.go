package imageio

import (
	"bufio"
	"compress/zlib"
	"encoding/binary"
	"hash/crc32"
	"image"
	"image/png"
	"io"
	"sync"
	"sync/atomic"
)

// encodePNGFast writes m as a PNG (ISO/IEC 15948, W3C PNG 2nd edition)
// byte for byte as png.Encoder{CompressionLevel: png.BestSpeed} writes it,
// with the row filters chosen on workers goroutines (workers < 1:
// GOMAXPROCS) while one goroutine compresses.
//
// The layout follows the standard library's encoder (Go's image/png, BSD
// licence): signature, IHDR, the zlib stream in IDAT chunks of 32 KiB (a
// bufio.Writer of 1<<15 bytes in front of the chunk writer), IEND. Each
// row's filter is the one of the five with the least sum of |byte| as a
// signed value (libpng's heuristic), tried in the library's order (up,
// Paeth, none, sub, average) with the same early exits, so the choice is
// the library's. A row's filter depends only on that row and the one
// above, so bands of rows are filtered independently; the filtered bytes
// go to the compressor in raster order, and deflate at level 1 compresses
// whole 64 KiB windows whatever the sizes of the writes, so the stream is
// the library's. Only the two types cleave writes take this path: an
// opaque *image.RGBA (8-bit RGB) and an *image.Gray16 (16-bit gray); any
// other image goes to the library's encoder.
func encodePNGFast(w io.Writer, m image.Image, workers int) error {
	b := m.Bounds()
	width, height := b.Dx(), b.Dy()
	var (
		bpp          int // bytes per pixel
		depth, ctype byte
		raw          func(y int, dst []byte) // row y's unfiltered bytes
	)
	switch img := m.(type) {
	case *image.RGBA:
		if !img.Opaque() {
			return libraryPNG(w, m)
		}
		bpp, depth, ctype = 3, 8, 2 // truecolour
		raw = func(y int, dst []byte) {
			j := img.PixOffset(b.Min.X, b.Min.Y+y)
			pix := img.Pix[j : j+4*width]
			for x := 0; x < width; x++ {
				dst[3*x], dst[3*x+1], dst[3*x+2] = pix[4*x], pix[4*x+1], pix[4*x+2]
			}
		}
	case *image.Gray16:
		bpp, depth, ctype = 2, 16, 0 // grayscale, big-endian samples as stored
		raw = func(y int, dst []byte) {
			j := img.PixOffset(b.Min.X, b.Min.Y+y)
			copy(dst, img.Pix[j:j+2*width])
		}
	default:
		return libraryPNG(w, m)
	}
	if width <= 0 || height <= 0 || int64(width) >= 1<<32 || int64(height) >= 1<<32 {
		return libraryPNG(w, m) // the library's error
	}
	workers = numWorkers(workers)
	sz := 1 + bpp*width // filter byte and the row

	if _, err := io.WriteString(w, "\x89PNG\r\n\x1a\n"); err != nil {
		return err
	}
	var ihdr [13]byte
	binary.BigEndian.PutUint32(ihdr[0:4], uint32(width))
	binary.BigEndian.PutUint32(ihdr[4:8], uint32(height))
	ihdr[8], ihdr[9] = depth, ctype // compression, filter method, interlace: 0
	if err := writePNGChunk(w, ihdr[:], "IHDR"); err != nil {
		return err
	}
	cw := &idatWriter{w: w}
	bw := bufio.NewWriterSize(cw, 1<<15)
	zw, err := zlib.NewWriterLevel(bw, zlib.BestSpeed)
	if err != nil {
		return err
	}

	const band = 16 // rows per work item
	nb := (height + band - 1) / band
	out := make([]chan []byte, nb)
	for k := range out {
		out[k] = make(chan []byte, 1)
	}
	// A band is taken only with a slot, and slots are given back as the
	// bands are compressed in order, so at most len(slots) bands wait.
	slots := make(chan struct{}, 2*workers+2)
	stop := make(chan struct{})
	var next atomic.Int64
	var wg sync.WaitGroup
	for g := 0; g < min(workers, nb); g++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			var cr [5][]byte
			for f := range cr {
				cr[f] = make([]byte, sz)
				cr[f][0] = byte(f)
			}
			pr := make([]byte, sz)
			for {
				select {
				case slots <- struct{}{}:
				case <-stop:
					return
				}
				k := int(next.Add(1) - 1)
				if k >= nb {
					return
				}
				y0, y1 := k*band, min(height, (k+1)*band)
				buf := make([]byte, 0, (y1-y0)*sz)
				clear(pr)
				if y0 > 0 {
					raw(y0-1, pr[1:])
				}
				for y := y0; y < y1; y++ {
					raw(y, cr[0][1:])
					f := pngFilter(&cr, pr, bpp)
					buf = append(buf, cr[f]...)
					pr, cr[0] = cr[0], pr
				}
				out[k] <- buf
			}
		}()
	}
	var werr error
	for k := 0; k < nb && werr == nil; k++ {
		buf := <-out[k]
		_, werr = zw.Write(buf)
		<-slots
	}
	close(stop)
	wg.Wait()
	if werr != nil {
		return werr
	}
	// The library closes the compressor before flushing the chunk buffer.
	if err := zw.Close(); err != nil {
		return err
	}
	if err := bw.Flush(); err != nil {
		return err
	}
	if cw.err != nil {
		return cw.err
	}
	return writePNGChunk(w, nil, "IEND")
}

// libraryPNG is the standard library's encoder at cleave's level.
func libraryPNG(w io.Writer, m image.Image) error {
	enc := png.Encoder{CompressionLevel: png.BestSpeed}
	return enc.Encode(w, m)
}

// writePNGChunk writes one chunk: length, type, data, CRC-32 of type and
// data, in three writes as the library does.
func writePNGChunk(w io.Writer, data []byte, name string) error {
	var head [8]byte
	binary.BigEndian.PutUint32(head[:4], uint32(len(data)))
	copy(head[4:], name)
	crc := crc32.NewIEEE()
	crc.Write(head[4:8])
	crc.Write(data)
	var foot [4]byte
	binary.BigEndian.PutUint32(foot[:], crc.Sum32())
	if _, err := w.Write(head[:]); err != nil {
		return err
	}
	if _, err := w.Write(data); err != nil {
		return err
	}
	_, err := w.Write(foot[:])
	return err
}

// idatWriter makes every write one IDAT chunk.
type idatWriter struct {
	w   io.Writer
	err error
}

func (c *idatWriter) Write(p []byte) (int, error) {
	if c.err != nil {
		return 0, c.err
	}
	if c.err = writePNGChunk(c.w, p, "IDAT"); c.err != nil {
		return 0, c.err
	}
	return len(p), nil
}

// pngFilter chooses the filter of the row cr[0] (cr[0][0] = 0, cr[f][0] =
// f) under the previous row pr, writes the filtered row into cr[f] and
// returns f: the standard library's heuristic and order (see
// encodePNGFast).
func pngFilter(cr *[5][]byte, pr []byte, bpp int) int {
	const (
		ftNone = iota
		ftSub
		ftUp
		ftAverage
		ftPaeth
	)
	cdat0, cdat1, cdat2, cdat3, cdat4 := cr[0][1:], cr[1][1:], cr[2][1:], cr[3][1:], cr[4][1:]
	pdat := pr[1:]
	n := len(cdat0)

	sum := 0
	for i := 0; i < n; i++ {
		cdat2[i] = cdat0[i] - pdat[i]
		sum += abs8(cdat2[i])
	}
	best, filter := sum, ftUp

	sum = 0
	for i := 0; i < bpp; i++ {
		cdat4[i] = cdat0[i] - pdat[i]
		sum += abs8(cdat4[i])
	}
	for i := bpp; i < n; i++ {
		cdat4[i] = cdat0[i] - paeth(cdat0[i-bpp], pdat[i], pdat[i-bpp])
		sum += abs8(cdat4[i])
		if sum >= best {
			break
		}
	}
	if sum < best {
		best, filter = sum, ftPaeth
	}

	sum = 0
	for i := 0; i < n; i++ {
		sum += abs8(cdat0[i])
		if sum >= best {
			break
		}
	}
	if sum < best {
		best, filter = sum, ftNone
	}

	sum = 0
	for i := 0; i < bpp; i++ {
		cdat1[i] = cdat0[i]
		sum += abs8(cdat1[i])
	}
	for i := bpp; i < n; i++ {
		cdat1[i] = cdat0[i] - cdat0[i-bpp]
		sum += abs8(cdat1[i])
		if sum >= best {
			break
		}
	}
	if sum < best {
		best, filter = sum, ftSub
	}

	sum = 0
	for i := 0; i < bpp; i++ {
		cdat3[i] = cdat0[i] - pdat[i]/2
		sum += abs8(cdat3[i])
	}
	for i := bpp; i < n; i++ {
		cdat3[i] = cdat0[i] - uint8((int(cdat0[i-bpp])+int(pdat[i]))/2)
		sum += abs8(cdat3[i])
		if sum >= best {
			break
		}
	}
	if sum < best {
		filter = ftAverage
	}
	return filter
}

// abs8 is |d| for the byte d read as a signed int8.
func abs8(d uint8) int {
	if d < 128 {
		return int(d)
	}
	return 256 - int(d)
}

// paeth is the Paeth predictor of the PNG specification (section 9.4):
// of a (left), b (up) and c (upper left), the one nearest a + b - c, ties
// to a, then b.
func paeth(a, b, c uint8) uint8 {
	pc := int(c)
	pa := int(b) - pc
	pb := int(a) - pc
	pc = absInt(pa + pb)
	pa = absInt(pa)
	pb = absInt(pb)
	if pa <= pb && pa <= pc {
		return a
	} else if pb <= pc {
		return b
	}
	return c
}

func absInt(x int) int {
	if x < 0 {
		return -x
	}
	return x
}
