package imageio

import "encoding/binary"

// jpegOrientation returns the EXIF Orientation (tag 0x0112) of a JPEG
// stream, or 1 when there is none or it is malformed. The tag lives in IFD0
// of the TIFF structure inside the APP1 segment that starts "Exif\0\0"
// (CIPA DC-008-2019, Exif 2.32, section 4.5.4 and 4.6.4; TIFF 6.0 section 2).
func jpegOrientation(b []byte) int {
	if len(b) < 4 || b[0] != 0xff || b[1] != 0xd8 {
		return 1
	}
	i := 2
	for i+4 <= len(b) {
		if b[i] != 0xff {
			return 1
		}
		marker := b[i+1]
		if marker == 0xff { // fill byte
			i++
			continue
		}
		if marker == 0xda || marker == 0xd9 { // start of scan or end of image: no more headers
			return 1
		}
		n := int(b[i+2])<<8 | int(b[i+3])
		if n < 2 || i+2+n > len(b) {
			return 1
		}
		seg := b[i+4 : i+2+n]
		if marker == 0xe1 && len(seg) >= 6 && string(seg[:6]) == "Exif\x00\x00" {
			if o := tiffOrientation(seg[6:]); o != 0 {
				return o
			}
		}
		i += 2 + n
	}
	return 1
}

// tiffOrientation reads the Orientation entry of IFD0 of a TIFF structure;
// 0 when absent or invalid.
func tiffOrientation(t []byte) int {
	if len(t) < 8 {
		return 0
	}
	var bo binary.ByteOrder
	switch string(t[:2]) {
	case "II":
		bo = binary.LittleEndian
	case "MM":
		bo = binary.BigEndian
	default:
		return 0
	}
	if bo.Uint16(t[2:]) != 42 {
		return 0
	}
	off := int64(bo.Uint32(t[4:]))
	if off < 8 || off+2 > int64(len(t)) {
		return 0
	}
	count := int64(bo.Uint16(t[off:]))
	for k := int64(0); k < count; k++ {
		e := off + 2 + 12*k
		if e+12 > int64(len(t)) {
			return 0
		}
		if bo.Uint16(t[e:]) != 0x0112 {
			continue
		}
		typ, cnt := bo.Uint16(t[e+2:]), bo.Uint32(t[e+4:])
		if typ != 3 || cnt < 1 { // SHORT, inline in the value field
			return 0
		}
		v := int(bo.Uint16(t[e+8:]))
		if v < 1 || v > 8 {
			return 0
		}
		return v
	}
	return 0
}

// orient turns an image stored with EXIF orientation o into the upright
// image. With W x H the stored size, display pixel (dx, dy) takes stored
// pixel (sx, sy) where, by the tag's definition of where the stored 0th row
// and column belong (Exif 2.32, Orientation):
//
//	1: (dx, dy)           2: (W-1-dx, dy)        3: (W-1-dx, H-1-dy)   4: (dx, H-1-dy)
//	5: (dy, dx)           6: (dy, H-1-dx)        7: (W-1-dy, H-1-dx)   8: (W-1-dy, dx)
//
// Values 5..8 swap width and height (6 is the usual "rotate 90 clockwise").
func orient(im *Image, o int) *Image {
	if o <= 1 || o > 8 {
		return im
	}
	W, H := im.Width, im.Height
	dw, dh := W, H
	if o >= 5 {
		dw, dh = H, W
	}
	src := func(dx, dy int) int {
		var sx, sy int
		switch o {
		case 2:
			sx, sy = W-1-dx, dy
		case 3:
			sx, sy = W-1-dx, H-1-dy
		case 4:
			sx, sy = dx, H-1-dy
		case 5:
			sx, sy = dy, dx
		case 6:
			sx, sy = dy, H-1-dx
		case 7:
			sx, sy = W-1-dy, H-1-dx
		case 8:
			sx, sy = W-1-dy, dx
		}
		return sy*W + sx
	}
	out := *im
	out.Width, out.Height = dw, dh
	out.Planes = make([][]float32, len(im.Planes))
	for c, p := range im.Planes {
		q := make([]float32, len(p))
		for dy := 0; dy < dh; dy++ {
			for dx := 0; dx < dw; dx++ {
				q[dy*dw+dx] = p[src(dx, dy)]
			}
		}
		out.Planes[c] = q
	}
	return &out
}
