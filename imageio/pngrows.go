package imageio

import (
	"bufio"
	stdflate "compress/flate"
	"encoding/binary"
	"hash/adler32"
	"hash/crc32"
	"io"
	"sync"
	"sync/atomic"

	"github.com/cleave-seg/cleave/segment/parallel"
	"github.com/klauspost/compress/flate"
)

// pngRows describes an image to encodePNGRows as rows of samples: rows
// fills dst with the unfiltered bytes of rows y0..y1-1, (y1-y0)·bpp·width
// bytes, the samples as the PNG holds them (8-bit RGB, or 16-bit gray
// big-endian). It is called from several goroutines at once, on disjoint
// rows or on the same rows twice (the row above a band), and must give
// the same bytes each time.
type pngRows struct {
	width, height int
	bpp           int  // bytes per pixel
	depth, ctype  byte // IHDR bit depth and colour type
	rows          func(y0, y1 int, dst []byte)
	// flat marks pictures of large areas of one value (label maps, the
	// preview), whose bands the standard library's deflate compresses;
	// the others (the overlay) go to Klaus Post's (see encodePNGRows).
	flat bool
}

// pngBandBytes is the filtered bytes of one band, the unit of work of
// encodePNGRows: large enough that the few rows a band repeats (the
// dictionary's) and the 5 bytes of its flush are small beside it, small
// enough that the bands of a megapixel image keep two cores busy.
const pngBandBytes = 1 << 19

// pngDict is the deflate window (RFC 1951: distances up to 32 KiB): the
// bytes before a band that its compressor is primed with.
const pngDict = 32 << 10

// encodePNGRows writes the image p as a PNG (ISO/IEC 15948, W3C PNG 2nd
// edition: signature, IHDR, IDAT chunks, IEND) in which bands of rows are
// filtered and compressed on workers goroutines (workers < 1: GOMAXPROCS)
// and only their concatenation is serial.
//
// Each row's filter is the one of the five with the least sum of |byte|
// read as a signed value, tried in the order of Go's image/png encoder
// (up, Paeth, none, sub, average) with its early exits, so the filtered
// bytes are the ones png.Encoder feeds its compressor. A row's filter
// depends only on that row and the one above, so bands are filtered
// independently.
//
// The zlib stream (RFC 1950) is made as pigz (Adler 2007) makes one
// from parallel pieces: each band is deflated (RFC 1951, level 1) and
// ended by a sync flush (an empty stored block, which leaves the stream
// byte-aligned) or, for the last band, by the final block; the pieces are
// concatenated after the 2-byte zlib header, and the Adler-32 of the
// whole is combined from the bands' (adler32Combine). The overlay's
// bands go to Klaus Post's compress/flate, primed with the 32 KiB of
// filtered bytes before the band as the dictionary so that matches reach
// back across the band's start as in one stream; on the 16-megapixel
// overlay it was 2.5 times as fast as the standard library's level 1 and
// its file 3 % smaller. On flat pictures (pngRows.flat: label maps, the
// preview) its files were 22-35 % larger than the standard library's, so
// those bands go to the standard library's level 1, which ignores a
// dictionary (each band starts without history; its files were within
// 2 % of png.Encoder's). The bands depend only on the image's width and
// height, never on the worker count, so the file is the same for any
// number of workers. The decoded samples are those of the image, and so
// are the filtered bytes inside the zlib stream (the library's filter
// choices); only the deflate differs from png.Encoder's.
func encodePNGRows(w io.Writer, p pngRows, workers int) error {
	width, height, bpp := p.width, p.height, p.bpp
	workers = parallel.Workers(workers)
	sz := 1 + bpp*width // filter byte and the row
	band := max(1, pngBandBytes/sz)
	// Rows before a band whose filtered bytes fill the dictionary.
	dictRows := (pngDict + sz - 1) / sz
	nb := (height + band - 1) / band

	if _, err := io.WriteString(w, "\x89PNG\r\n\x1a\n"); err != nil {
		return err
	}
	var ihdr [13]byte
	binary.BigEndian.PutUint32(ihdr[0:4], uint32(width))
	binary.BigEndian.PutUint32(ihdr[4:8], uint32(height))
	ihdr[8], ihdr[9] = p.depth, p.ctype // compression, filter method, interlace: 0
	if err := writePNGChunk(w, ihdr[:], "IHDR"); err != nil {
		return err
	}

	type piece struct {
		z     []byte // deflated band
		adler uint32 // Adler-32 of its filtered bytes
		n     int    // and their number
		err   error
	}
	out := make([]chan piece, nb)
	for k := range out {
		out[k] = make(chan piece, 1)
	}
	// A band is taken only with a slot, and slots are given back as the
	// bands are written in order, so at most len(slots) bands wait.
	slots := make(chan struct{}, 2*workers)
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
			var (
				raw, filt []byte
				zbuf      growBuffer
				fw        bandDeflater
			)
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
				ys := max(0, y0-dictRows) // first row filtered for the dictionary
				yr := max(0, ys-1)        // first row drawn: the one above ys
				raw = grow(raw, (y1-yr)*(sz-1))
				p.rows(yr, y1, raw)
				filt = grow(filt, (y1-ys)*sz)
				prior := make([]byte, sz) // zeros above the first row
				for y := ys; y < y1; y++ {
					if y > yr {
						copy(prior[1:], raw[(y-1-yr)*(sz-1):(y-yr)*(sz-1)])
					}
					copy(cr[0][1:], raw[(y-yr)*(sz-1):(y+1-yr)*(sz-1)])
					f := pngFilter(&cr, prior, bpp)
					copy(filt[(y-ys)*sz:], cr[f])
				}
				start := (y0 - ys) * sz
				dict := filt[max(0, start-pngDict):start]
				data := filt[start:]
				zbuf.b = zbuf.b[:0]
				var err error
				if fw == nil {
					fw, err = newBandDeflater(p.flat)
				}
				if err == nil {
					fw.ResetDict(&zbuf, dict)
					_, err = fw.Write(data)
				}
				if err == nil {
					if k == nb-1 {
						err = fw.Close()
					} else {
						err = fw.Flush()
					}
				}
				out[k] <- piece{z: append([]byte(nil), zbuf.b...), adler: adler32.Checksum(data), n: len(data), err: err}
			}
		}()
	}
	cw := &idatWriter{w: w}
	bw := bufio.NewWriterSize(cw, 1<<16)
	// zlib header: deflate with a 32 KiB window (CMF 0x78), the fastest
	// level (FLEVEL 0), no preset dictionary, FCHECK making CMF·256+FLG a
	// multiple of 31 (RFC 1950, section 2.2).
	_, werr := bw.Write([]byte{0x78, 0x01})
	sum := adler32.Checksum(nil)
	for k := 0; k < nb && werr == nil; k++ {
		pc := <-out[k]
		if werr = pc.err; werr == nil {
			_, werr = bw.Write(pc.z)
			sum = adler32Combine(sum, pc.adler, pc.n)
		}
		<-slots
	}
	close(stop)
	wg.Wait()
	if werr != nil {
		return werr
	}
	var tail [4]byte
	binary.BigEndian.PutUint32(tail[:], sum)
	if _, err := bw.Write(tail[:]); err != nil {
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

// bandDeflater is a deflate compressor (RFC 1951) that starts a new
// stream after a dictionary.
type bandDeflater interface {
	io.WriteCloser
	Flush() error
	ResetDict(w io.Writer, dict []byte)
}

// newBandDeflater is a level-1 compressor: the standard library's for flat
// pictures, Klaus Post's otherwise (see encodePNGRows).
func newBandDeflater(flat bool) (bandDeflater, error) {
	if flat {
		fw, err := stdflate.NewWriter(io.Discard, stdflate.BestSpeed)
		return stdDeflater{fw}, err
	}
	return flate.NewWriter(io.Discard, flate.BestSpeed)
}

// stdDeflater is the standard library's compressor as a bandDeflater; at
// level 1 it ignores a dictionary (compress/flate's fillWindow), so
// ResetDict is a Reset.
type stdDeflater struct{ *stdflate.Writer }

func (d stdDeflater) ResetDict(w io.Writer, _ []byte) { d.Reset(w) }

// grow returns b resized to n bytes, reallocated only when too small.
func grow(b []byte, n int) []byte {
	if cap(b) < n {
		return make([]byte, n)
	}
	return b[:n]
}

// growBuffer is an io.Writer that appends to b.
type growBuffer struct{ b []byte }

func (g *growBuffer) Write(p []byte) (int, error) {
	g.b = append(g.b, p...)
	return len(p), nil
}

// adler32Base is the modulus of Adler-32 (RFC 1950, section 8.2).
const adler32Base = 65521

// adler32Combine is the Adler-32 of the concatenation A·B from a =
// Adler-32(A), b = Adler-32(B) and n = len(B), as zlib's
// adler32_combine: with A's sums s1a, s2a and B's s1b, s2b, the sums of
// A·B are s1 = s1a + s1b - 1 and s2 = s2a + s2b + n·(s1a - 1), all mod
// 65521.
func adler32Combine(a, b uint32, n int) uint32 {
	const base = adler32Base
	rem := uint64(n % base)
	s1a, s2a := uint64(a&0xffff), uint64(a>>16)
	s1b, s2b := uint64(b&0xffff), uint64(b>>16)
	s1 := (s1a + s1b + base - 1) % base
	s2 := (s2a + s2b + rem*s1a + base*2 - rem) % base
	return uint32(s2<<16 | s1)
}

// rgbaToRGB copies the R, G and B of every RGBA pixel of src to dst.
func rgbaToRGB(dst, src []byte) {
	n := len(src) / 4
	dst, src = dst[:3*n], src[:4*n]
	for x := 0; x < n; x++ {
		dst[3*x], dst[3*x+1], dst[3*x+2] = src[4*x], src[4*x+1], src[4*x+2]
	}
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
// encodePNGRows). The library stops a candidate's sum once it reaches the
// best so far; here the sum is checked every 64 bytes, which gives the
// same verdict (the sums only grow), and the bytes are filtered and
// summed eight at a time in the lanes of a uint64 (swarSub, swarAvg,
// swarAbsSum), Paeth's predictor without branches on the data, sixteen
// bytes at a time in paethAVX2 where usePaethAVX2 is set; where
// useFilterAVX2 is set the other four candidates run thirty-two bytes at
// a time in subAbsAVX2, absSumAVX2 and avgAbsAVX2 (filter_amd64.s).
func pngFilter(cr *[5][]byte, pr []byte, bpp int) int {
	const (
		ftNone = iota
		ftSub
		ftUp
		ftAverage
		ftPaeth
	)
	n := len(cr[0]) - 1
	cdat0, cdat1, cdat2, cdat3, cdat4 := cr[0][1:1+n], cr[1][1:1+n], cr[2][1:1+n], cr[3][1:1+n], cr[4][1:1+n]
	pdat := pr[1 : 1+n]
	le := binary.LittleEndian

	// Up: x - above.
	sum, i := 0, 0
	if m := n &^ 31; useFilterAVX2 && m > 0 {
		sum = subAbsAVX2(&cdat0[0], &pdat[0], &cdat2[0], m)
		i = m
	}
	for ; i+8 <= n; i += 8 {
		d := swarSub(le.Uint64(cdat0[i:]), le.Uint64(pdat[i:]))
		le.PutUint64(cdat2[i:], d)
		sum += swarAbsSum(d)
	}
	for ; i < n; i++ {
		cdat2[i] = cdat0[i] - pdat[i]
		sum += abs8(cdat2[i])
	}
	best, filter := sum, ftUp

	// Paeth: x - paeth(left, above, upper left).
	sum = 0
	for i := 0; i < bpp; i++ {
		cdat4[i] = cdat0[i] - pdat[i]
		sum += abs8(cdat4[i])
	}
	for i0 := bpp; i0 < n && sum < best; i0 += 64 {
		i, i1 := i0, min(n, i0+64)
		if m := (i1 - i) &^ 15; usePaethAVX2 && m > 0 {
			sum += paethAVX2(&cdat0[i], &cdat0[i-bpp], &pdat[i], &pdat[i-bpp], &cdat4[i], m)
			i += m
		}
		sum += paethRow(cdat0[i-bpp:i1-bpp], pdat[i:i1], pdat[i-bpp:i1-bpp], cdat0[i:i1], cdat4[i:i1])
	}
	if sum < best {
		best, filter = sum, ftPaeth
	}

	// None.
	sum = 0
	for i0 := 0; i0 < n && sum < best; i0 += 64 {
		i1 := min(n, i0+64)
		i := i0
		if m := (i1 - i) &^ 31; useFilterAVX2 && m > 0 {
			sum += absSumAVX2(&cdat0[i], m)
			i += m
		}
		for ; i+8 <= i1; i += 8 {
			sum += swarAbsSum(le.Uint64(cdat0[i:]))
		}
		for ; i < i1; i++ {
			sum += abs8(cdat0[i])
		}
	}
	if sum < best {
		best, filter = sum, ftNone
	}

	// Sub: x - left.
	sum = 0
	for i := 0; i < bpp; i++ {
		cdat1[i] = cdat0[i]
		sum += abs8(cdat1[i])
	}
	for i0 := bpp; i0 < n && sum < best; i0 += 64 {
		i1 := min(n, i0+64)
		i := i0
		if m := (i1 - i) &^ 31; useFilterAVX2 && m > 0 {
			sum += subAbsAVX2(&cdat0[i], &cdat0[i-bpp], &cdat1[i], m)
			i += m
		}
		for ; i+8 <= i1; i += 8 {
			d := swarSub(le.Uint64(cdat0[i:]), le.Uint64(cdat0[i-bpp:]))
			le.PutUint64(cdat1[i:], d)
			sum += swarAbsSum(d)
		}
		for ; i < i1; i++ {
			cdat1[i] = cdat0[i] - cdat0[i-bpp]
			sum += abs8(cdat1[i])
		}
	}
	if sum < best {
		best, filter = sum, ftSub
	}

	// Average: x - floor((left + above)/2).
	sum = 0
	for i := 0; i < bpp; i++ {
		cdat3[i] = cdat0[i] - pdat[i]/2
		sum += abs8(cdat3[i])
	}
	for i0 := bpp; i0 < n && sum < best; i0 += 64 {
		i1 := min(n, i0+64)
		i := i0
		if m := (i1 - i) &^ 31; useFilterAVX2 && m > 0 {
			sum += avgAbsAVX2(&cdat0[i], &cdat0[i-bpp], &pdat[i], &cdat3[i], m)
			i += m
		}
		for ; i+8 <= i1; i += 8 {
			d := swarSub(le.Uint64(cdat0[i:]), swarAvg(le.Uint64(cdat0[i-bpp:]), le.Uint64(pdat[i:])))
			le.PutUint64(cdat3[i:], d)
			sum += swarAbsSum(d)
		}
		for ; i < i1; i++ {
			cdat3[i] = cdat0[i] - uint8((int(cdat0[i-bpp])+int(pdat[i]))/2)
			sum += abs8(cdat3[i])
		}
	}
	if sum < best {
		filter = ftAverage
	}
	return filter
}

// paethRow writes out[i] = cur[i] - paeth(a[i], b[i], c[i]) and returns
// the sum of |out[i]| read as int8 (a: the bytes bpp to the left, b:
// above, c: above and to the left).
func paethRow(a, b, c, cur, out []byte) int {
	a, b, c, cur = a[:len(out)], b[:len(out)], c[:len(out)], cur[:len(out)]
	sum := 0
	for i := range out {
		// Paeth (PNG specification, section 9.4): of a, b, c the one
		// nearest a + b - c, ties to a, then b.
		av, bv, cv := int(a[i]), int(b[i]), int(c[i])
		pa, pb := bv-cv, av-cv
		pc := pa + pb
		ma, mb, mc := pa>>63, pb>>63, pc>>63
		pa, pb, pc = (pa^ma)-ma, (pb^mb)-mb, (pc^mc)-mc
		r := cv
		if pb <= pc {
			r = bv
		}
		if pa <= min(pb, pc) {
			r = av
		}
		d := int8(int(cur[i]) - r)
		out[i] = byte(d)
		m := int(d) >> 63
		sum += (int(d) ^ m) - m
	}
	return sum
}

// SWAR ("SIMD within a register") on the eight bytes of a uint64, after
// Warren, Hacker's Delight (2nd ed. 2013), section 2-18.
const (
	swarHigh = 0x8080808080808080
	swarLow7 = 0x7f7f7f7f7f7f7f7f
	swarOnes = 0x0101010101010101
	swarEven = 0x00ff00ff00ff00ff
)

// swarSub is x - y in each byte, modulo 256.
func swarSub(x, y uint64) uint64 {
	return ((x | swarHigh) - (y &^ swarHigh)) ^ ((x ^ ^y) & swarHigh)
}

// swarAvg is floor((x + y)/2) in each byte: (x AND y) + (x XOR y)/2.
func swarAvg(x, y uint64) uint64 {
	return (x & y) + ((x ^ y) >> 1 & swarLow7)
}

// swarAbsSum is the sum over the eight bytes of |byte| read as an int8
// (abs8): negative bytes are negated as ~d + 1 (at most 128, so no carry
// leaves a byte), then the bytes are added in pairs into 16-bit lanes and
// the four lanes summed by a multiplication.
func swarAbsSum(d uint64) int {
	s := d >> 7 & swarOnes
	a := (d ^ s*0xff) + s
	a = a&swarEven + a>>8&swarEven
	return int(a * 0x0001000100010001 >> 48)
}

// abs8 is |d| for the byte d read as a signed int8.
func abs8(d uint8) int {
	v := int(int8(d))
	m := v >> 63
	return (v ^ m) - m
}
