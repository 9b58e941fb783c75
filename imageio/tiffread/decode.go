package tiffread

import (
	"bytes"
	"compress/zlib"
	"context"
	"encoding/binary"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/jpeg"
	"io"
	"math"
	"runtime"

	"github.com/cleave-seg/cleave/segment/parallel"
	"github.com/klauspost/compress/zstd"
	"golang.org/x/image/tiff/lzw"
)

// Sample is a type a sample plane is decoded into: float32 for pixels
// (every 8- and 16-bit value and every float32 exactly), int32 for label
// maps (integers only, refused when a value does not fit).
type Sample interface{ float32 | int32 }

// ChunkBytes is the size of the buffer ReadSample decompresses one strip
// or tile into, for memory estimates.
func (p *Page) ChunkBytes() int64 {
	spc := int64(p.SamplesPerPixel)
	if p.Planar == 2 {
		spc = 1
	}
	return int64(p.ChunkWidth) * int64(p.ChunkHeight) * spc * int64(max(p.BitsPerSample/8, 1))
}

// ReadSample decodes sample s (0-based, below SamplesPerPixel) of every
// pixel of the page into dst, which must hold Width*Height values, row by
// row. Unsigned samples of a MinIsWhite page are inverted (max - v) so
// that larger is brighter, as TIFF 6.0 defines PhotometricInterpretation
// 0. Reading stops with ctx's error when ctx is done.
func ReadSample[T Sample](ctx context.Context, p *Page, s int, dst []T) error {
	if err := p.Unsupported(); err != nil {
		return err
	}
	if s < 0 || s >= p.SamplesPerPixel {
		return fmt.Errorf("sample %d of a page with %d samples per pixel", s, p.SamplesPerPixel)
	}
	if len(dst) != p.Width*p.Height {
		return fmt.Errorf("destination of %d values for a %dx%d page", len(dst), p.Width, p.Height)
	}
	f := p.f
	across, down := p.chunks()
	perPlane := across * down
	nChunks := perPlane
	spc := p.SamplesPerPixel // samples per pixel within a chunk
	si := s                  // the sample's position within a chunk pixel
	if p.Planar == 2 {
		nChunks *= p.SamplesPerPixel
		spc, si = 1, 0
	}
	offTag, cntTag := uint16(tStripOffsets), uint16(tStripByteCounts)
	if p.Tiled {
		offTag, cntTag = tTileOffsets, tTileByteCounts
	}
	oe, ok := p.entries[offTag]
	if !ok {
		return FormatError("no strip or tile offsets")
	}
	if oe.count < uint64(nChunks) {
		return FormatError(fmt.Sprintf("%d strip or tile offsets for %d strips or tiles", oe.count, nChunks))
	}
	offsets, err := f.uintsN(oe, nChunks)
	if err != nil {
		return err
	}
	bps := p.BitsPerSample / 8
	rowBytes := p.ChunkWidth * spc * bps
	chunkBytes := rowBytes * p.ChunkHeight
	var counts []uint64
	if ce, ok := p.entries[cntTag]; ok {
		if ce.count < uint64(nChunks) {
			return FormatError(fmt.Sprintf("%d strip or tile byte counts for %d strips or tiles", ce.count, nChunks))
		}
		if counts, err = f.uintsN(ce, nChunks); err != nil {
			return err
		}
	} else if p.Compression != CompressionNone {
		return FormatError("no strip or tile byte counts")
	}
	// A compressed chunk is never much larger than its pixels: PackBits
	// adds 1 byte in 128, deflate 5 bytes per 16 KiB block, LZW with
	// 12-bit codes half again; a larger count is damage.
	maxCompressed := uint64(chunkBytes)*2 + 1<<16
	exact := isInt[T]()
	// one decodes chunk number c (row-major within the sample plane)
	// with a worker's decoder and buffers.
	workers := min(Workers, runtime.GOMAXPROCS(0))
	// rowsParallel: the chunks alone would leave workers idle.
	rowsParallel := parallel.Goroutines(perPlane, workers) < workers
	one := func(dec *decoder, buf, tmp []byte, c int) error {
		cy, cx := c/across, c%across
		k := c
		if p.Planar == 2 {
			k += s * perPlane
		}
		y0, x0 := cy*p.ChunkHeight, cx*p.ChunkWidth
		rows := p.ChunkHeight
		if !p.Tiled {
			rows = min(rows, p.Height-y0) // the last strip may be short
		}
		need := rows * rowBytes
		var cnt uint64
		if counts != nil {
			cnt = counts[k]
		} else {
			cnt = uint64(need)
		}
		if p.Compression == CompressionNone {
			cnt = min(cnt, uint64(need))
		} else if cnt > maxCompressed {
			return FormatError(fmt.Sprintf("strip or tile %d claims %d bytes, more than %d pixel bytes can compress to", k, cnt, need))
		}
		off := offsets[k]
		if off > uint64(f.size) || cnt > uint64(f.size)-off {
			return fmt.Errorf("strip or tile %d (%d bytes at %d) lies past the end of the file: %w", k, cnt, off, io.ErrUnexpectedEOF)
		}
		if p.Compression == CompressionJPEG {
			if err := dec.jpegChunk(off, cnt, s, rows, x0, y0, dst); err != nil {
				return fmt.Errorf("strip or tile %d: %w", k, err)
			}
			return nil
		}
		if err := dec.chunk(off, cnt, buf[:need]); err != nil {
			return fmt.Errorf("strip or tile %d: %w", k, err)
		}
		w := min(p.ChunkWidth, p.Width-x0)
		rows = min(rows, p.Height-y0)
		convert := func(tmp []byte, r0, r1 int) error {
			for r := r0; r < r1; r++ {
				row := buf[r*rowBytes : (r+1)*rowBytes]
				switch p.Predictor {
				case predictorHorizontal:
					undoHorizontal(row, spc, bps, f.Order)
				case predictorFloatingPoint:
					undoFloatingPoint(row, tmp, spc, bps)
				}
				y := y0 + r
				if err := convertRow(dst[y*p.Width+x0:y*p.Width+x0+w], row, spc*bps, si*bps, p, exact); err != nil {
					return fmt.Errorf("pixel (%d, %d): %w", x0, y, err)
				}
			}
			return nil
		}
		if !rowsParallel {
			return convert(tmp, 0, rows)
		}
		// Fewer chunks than workers (one strip holding the whole
		// page, say): the chunk's rows are converted in fixed blocks
		// on the workers, each row alone, and the error is that of
		// the first failing row, as in one pass (parallel.ForErr).
		nb := (rows + rowBlock - 1) / rowBlock
		tmps := make([][]byte, parallel.Goroutines(nb, workers))
		return parallel.ForErr(nb, workers, func(g, b int) error {
			if tmps[g] == nil && p.Predictor == predictorFloatingPoint {
				tmps[g] = make([]byte, rowBytes)
			}
			return convert(tmps[g], b*rowBlock, min(rows, (b+1)*rowBlock))
		})
	}
	// Chunks are decoded by up to Workers goroutines (also bounded by
	// GOMAXPROCS), each with a decoder and buffers of its own; every chunk
	// writes its own pixels, so the result does not depend on the order.
	// The error reported is that of the first failing chunk in file order
	// (parallel.ForErr).
	type scratch struct {
		dec      *decoder
		buf, tmp []byte
	}
	scr := make([]*scratch, parallel.Goroutines(perPlane, workers))
	defer func() {
		for _, sc := range scr {
			if sc != nil {
				sc.dec.close()
			}
		}
	}()
	if err := parallel.ForErr(perPlane, workers, func(g, c int) error {
		if err := ctx.Err(); err != nil {
			return err
		}
		sc := scr[g]
		if sc == nil {
			sc = &scratch{dec: &decoder{p: p}, buf: make([]byte, chunkBytes)}
			if p.Predictor == predictorFloatingPoint {
				sc.tmp = make([]byte, rowBytes)
			}
			scr[g] = sc
		}
		return one(sc.dec, sc.buf, sc.tmp, c)
	}); err != nil {
		return err
	}
	return ctx.Err()
}

// Workers bounds the goroutines that decode the strips or tiles of one
// sample plane (also by GOMAXPROCS); each holds one chunk buffer.
const Workers = 4

// rowBlock is the number of rows of a chunk converted as one work item
// when a page has fewer chunks than workers (a variable only so that the
// tests can take blocks smaller than their images).
var rowBlock = 64

func isInt[T Sample]() bool {
	var z T
	_, ok := any(z).(int32)
	return ok
}

// decoder holds a page's reusable decompression state.
type decoder struct {
	p    *Page
	comp []byte
	zstd *zstd.Decoder
	tabs []byte // JPEGTables
}

func (d *decoder) close() {
	if d.zstd != nil {
		d.zstd.Close()
	}
}

// read returns the cnt bytes at off, in a buffer reused between chunks.
func (d *decoder) read(off, cnt uint64) ([]byte, error) {
	if uint64(cap(d.comp)) < cnt {
		d.comp = make([]byte, cnt)
	}
	b := d.comp[:cnt]
	n, err := d.p.f.r.ReadAt(b, int64(off))
	if n < len(b) {
		if err == nil || err == io.EOF {
			err = io.ErrUnexpectedEOF
		}
		return nil, err
	}
	return b, nil
}

// chunk reads and decompresses one strip or tile into out, which it must
// fill exactly (decompressed data beyond it, the padding of a last strip
// some writers store whole, is ignored).
func (d *decoder) chunk(off, cnt uint64, out []byte) error {
	p := d.p
	if p.Compression == CompressionNone {
		n, err := p.f.r.ReadAt(out[:cnt], int64(off))
		if n < int(cnt) && err != nil && err != io.EOF {
			return err
		}
		if n < len(out) {
			return fmt.Errorf("%d of %d bytes of pixel data: %w", n, len(out), io.ErrUnexpectedEOF)
		}
		return nil
	}
	data, err := d.read(off, cnt)
	if err != nil {
		return err
	}
	var rd io.Reader
	switch p.Compression {
	case CompressionLZW:
		rc := lzw.NewReader(bytes.NewReader(data), lzw.MSB, 8)
		defer rc.Close()
		rd = rc
	case CompressionDeflate, CompressionOldDeflate, CompressionDeflateAlt:
		zr, err := zlib.NewReader(bytes.NewReader(data))
		if err != nil {
			return fmt.Errorf("deflate stream: %w", err)
		}
		defer zr.Close()
		rd = zr
	case CompressionPackBits:
		return unpackBits(data, out)
	case CompressionZstd, CompressionZstdAlt:
		if d.zstd == nil {
			d.zstd, err = zstd.NewReader(nil, zstd.WithDecoderConcurrency(1), zstd.WithDecoderMaxMemory(uint64(len(out))+64<<20))
			if err != nil {
				return err
			}
		}
		got, err := d.zstd.DecodeAll(data, out[:0])
		if err != nil {
			return fmt.Errorf("zstd stream: %w", err)
		}
		if len(got) < len(out) {
			return fmt.Errorf("zstd stream gives %d of %d bytes: %w", len(got), len(out), io.ErrUnexpectedEOF)
		}
		if &got[0] != &out[0] {
			copy(out, got)
		}
		return nil
	default:
		return UnsupportedError(fmt.Sprintf("compression %d", p.Compression))
	}
	if _, err := io.ReadFull(rd, out); err != nil {
		if errors.Is(err, io.EOF) {
			err = io.ErrUnexpectedEOF
		}
		return fmt.Errorf("decompressing: %w", err)
	}
	return nil
}

// unpackBits decodes PackBits data (TIFF 6.0 section 9) into out, which
// it must fill: a header byte n in 0..127 copies the next n+1 bytes,
// -127..-1 repeats the next byte 1-n times, -128 is skipped.
func unpackBits(src, out []byte) error {
	o := 0
	for i := 0; o < len(out); {
		if i >= len(src) {
			return fmt.Errorf("PackBits data gives %d of %d bytes: %w", o, len(out), io.ErrUnexpectedEOF)
		}
		n := int(int8(src[i]))
		i++
		switch {
		case n >= 0:
			if i+n+1 > len(src) {
				return fmt.Errorf("PackBits literal run past the data: %w", io.ErrUnexpectedEOF)
			}
			o += copy(out[o:], src[i:i+n+1])
			i += n + 1
		case n != -128:
			if i >= len(src) {
				return fmt.Errorf("PackBits repeat run past the data: %w", io.ErrUnexpectedEOF)
			}
			b := src[i]
			i++
			for k := 0; k < 1-n && o < len(out); k++ {
				out[o] = b
				o++
			}
		}
	}
	return nil
}

// undoHorizontal reverses the horizontal differencing of TIFF 6.0 section
// 14 on one row: each sample is stored as its difference from the same
// sample of the pixel to its left, modulo 2^bits.
func undoHorizontal(row []byte, spc, bps int, order binary.ByteOrder) {
	switch bps {
	case 1:
		for i := spc; i < len(row); i++ {
			row[i] += row[i-spc]
		}
	case 2:
		for i := 2 * spc; i+2 <= len(row); i += 2 {
			order.PutUint16(row[i:], order.Uint16(row[i:])+order.Uint16(row[i-2*spc:]))
		}
	case 4:
		for i := 4 * spc; i+4 <= len(row); i += 4 {
			order.PutUint32(row[i:], order.Uint32(row[i:])+order.Uint32(row[i-4*spc:]))
		}
	case 8:
		for i := 8 * spc; i+8 <= len(row); i += 8 {
			order.PutUint64(row[i:], order.Uint64(row[i:])+order.Uint64(row[i-8*spc:]))
		}
	}
}

// undoFloatingPoint reverses the floating-point predictor of Adobe
// Photoshop TIFF Technical Note 3 (predictor 3) on one row of n = len/bps
// values: the encoder split the row's values into byte planes, most
// significant byte first, and differenced the bytes with a stride of the
// samples per pixel. The byte planes follow libtiff (4.5), the reference
// implementation, whose encoder splits the values as they lie in the
// file's byte order read as little-endian words: plane 0 holds each
// value's last byte in the file's order. For little-endian files that is
// the most significant byte, as the note describes; big-endian files
// written by libtiff on little-endian machines (the files there are) have
// the planes in the other order, and libtiff and Pillow read them so.
// The row is rewritten in the file's byte order; tmp holds one row.
func undoFloatingPoint(row, tmp []byte, spc, bps int) {
	for i := spc; i < len(row); i++ {
		row[i] += row[i-spc]
	}
	n := len(row) / bps
	copy(tmp, row)
	for k := 0; k < n; k++ {
		for b := 0; b < bps; b++ {
			row[k*bps+bps-1-b] = tmp[b*n+k]
		}
	}
}

// convertRow stores one sample of each of len(dst) pixels of a row:
// stride bytes per pixel, the sample at byte off within it.
func convertRow[T Sample](dst []T, row []byte, stride, off int, p *Page, exact bool) error {
	o := p.f.Order
	invert := p.Photometric == photometricMinIsWhite && p.SampleFormat != sampleFormatFloat && p.SampleFormat != sampleFormatInt
	at := func(x int) []byte { return row[x*stride+off:] }
	put := func(x int, v float64) error {
		if exact && (v != math.Trunc(v) || v < math.MinInt32 || v > math.MaxInt32) {
			return fmt.Errorf("value %v is not a 32-bit integer label", v)
		}
		dst[x] = T(v)
		return nil
	}
	switch {
	case p.SampleFormat == sampleFormatFloat:
		for x := range dst {
			var v float64
			switch p.BitsPerSample {
			case 16:
				v = float64(halfToFloat(o.Uint16(at(x))))
			case 32:
				v = float64(math.Float32frombits(o.Uint32(at(x))))
			default:
				v = math.Float64frombits(o.Uint64(at(x)))
			}
			if exact {
				if err := put(x, v); err != nil {
					return err
				}
				continue
			}
			dst[x] = T(v)
		}
	case p.SampleFormat == sampleFormatInt:
		for x := range dst {
			var v int64
			switch p.BitsPerSample {
			case 8:
				v = int64(int8(at(x)[0]))
			case 16:
				v = int64(int16(o.Uint16(at(x))))
			case 32:
				v = int64(int32(o.Uint32(at(x))))
			default:
				v = int64(o.Uint64(at(x)))
			}
			if err := put(x, float64(v)); err != nil {
				return err
			}
		}
	default:
		// 8- and 16-bit samples, the common case, by index arithmetic.
		var flip uint16
		if invert {
			flip = 0xffff
		}
		switch p.BitsPerSample {
		case 8:
			row = row[off:]
			for x := range dst {
				dst[x] = T(row[x*stride] ^ uint8(flip))
			}
		case 16:
			row = row[off:]
			if len(dst) > 0 {
				_ = row[(len(dst)-1)*stride+1]
			}
			if o == binary.LittleEndian {
				for x := range dst {
					j := x * stride
					dst[x] = T((uint16(row[j]) | uint16(row[j+1])<<8) ^ flip)
				}
			} else {
				for x := range dst {
					j := x * stride
					dst[x] = T((uint16(row[j])<<8 | uint16(row[j+1])) ^ flip)
				}
			}
		default:
			for x := range dst {
				var v uint64
				if p.BitsPerSample == 32 {
					v = uint64(o.Uint32(at(x)))
					if invert {
						v = math.MaxUint32 - v
					}
				} else {
					v = o.Uint64(at(x))
					if invert {
						v = math.MaxUint64 - v
					}
				}
				if err := put(x, float64(v)); err != nil {
					return err
				}
			}
		}
	}
	return nil
}

// halfToFloat converts an IEEE 754 binary16 value to float32.
func halfToFloat(h uint16) float32 {
	sign := uint32(h>>15) << 31
	exp := uint32(h>>10) & 0x1f
	frac := uint32(h) & 0x3ff
	switch {
	case exp == 0x1f: // infinity or NaN
		return math.Float32frombits(sign | 0x7f800000 | frac<<13)
	case exp == 0:
		if frac == 0 {
			return math.Float32frombits(sign)
		}
		// subnormal: frac * 2^-24
		v := float32(frac) * (1.0 / (1 << 24))
		if sign != 0 {
			v = -v
		}
		return v
	}
	return math.Float32frombits(sign | (exp+112)<<23 | frac<<13)
}

// jpegChunk decodes one JPEG-compressed strip or tile (TIFF Technical
// Note 2: each chunk is a JPEG interchange stream; the tables it omits
// are in JPEGTables, a tables-only stream from SOI to EOI) and stores
// sample s of its pixels that lie inside the image.
func (d *decoder) jpegChunk(off, cnt uint64, s, rows, x0, y0 int, dst any) error {
	p := d.p
	data, err := d.read(off, cnt)
	if err != nil {
		return err
	}
	if d.tabs == nil {
		d.tabs = []byte{}
		if e, ok := p.entries[tJPEGTables]; ok {
			t, err := p.f.raw(e)
			if err != nil {
				return err
			}
			if len(t) >= 4 && t[0] == 0xff && t[1] == 0xd8 && t[len(t)-2] == 0xff && t[len(t)-1] == 0xd9 {
				d.tabs = t[:len(t)-2]
			}
		}
	}
	stream := data
	if len(d.tabs) > 0 && len(data) >= 2 && data[0] == 0xff && data[1] == 0xd8 {
		stream = make([]byte, 0, len(d.tabs)+len(data)-2)
		stream = append(append(stream, d.tabs...), data[2:]...)
	}
	cfg, err := jpeg.DecodeConfig(bytes.NewReader(stream))
	if err != nil {
		return fmt.Errorf("JPEG stream: %w", err)
	}
	if cfg.Width > p.ChunkWidth || cfg.Height > p.ChunkHeight {
		return FormatError(fmt.Sprintf("JPEG frame %dx%d larger than its strip or tile %dx%d", cfg.Width, cfg.Height, p.ChunkWidth, p.ChunkHeight))
	}
	img, err := jpeg.Decode(bytes.NewReader(stream))
	if err != nil {
		return fmt.Errorf("JPEG stream: %w", err)
	}
	b := img.Bounds()
	for r := 0; r < min(rows, b.Dy()) && y0+r < p.Height; r++ {
		for c := 0; c < min(p.ChunkWidth, b.Dx()) && x0+c < p.Width; c++ {
			var v uint8
			switch m := img.(type) {
			case *image.Gray:
				v = m.Pix[r*m.Stride+c]
			case *image.YCbCr:
				yi, ci := m.YOffset(b.Min.X+c, b.Min.Y+r), m.COffset(b.Min.X+c, b.Min.Y+r)
				rr, gg, bb := color.YCbCrToRGB(m.Y[yi], m.Cb[ci], m.Cr[ci])
				v = [3]uint8{rr, gg, bb}[min(s, 2)]
			default:
				return UnsupportedError("JPEG colour model of a strip or tile")
			}
			i := (y0+r)*p.Width + x0 + c
			switch t := dst.(type) {
			case []float32:
				t[i] = float32(v)
			case []int32:
				t[i] = int32(v)
			}
		}
	}
	return nil
}
