package measure

import (
	"bufio"
	"io"
	"strconv"
)

// WriteGeoJSON writes the outlines as a GeoJSON FeatureCollection (RFC
// 7946), one Feature per label: geometry a Polygon (a MultiPolygon when
// the label has several 4-connected pieces), properties the label and,
// when classOf is not nil, its class. Coordinates are pixel corners in
// pixel units, x to the right and y down from the top-left corner of
// the image (RFC 7946 section 4 allows a coordinate system other than
// longitude and latitude by prior arrangement; this is it). Rings are
// closed (the first position repeated last); outer rings have positive
// shoelace area, counter-clockwise when the numbers are read as
// ordinary x, y axes (clockwise as seen on the image, whose y axis points
// down), and holes the opposite, the right-hand rule of RFC 7946 section
// 3.1.6. The Feature's id is the label.
func WriteGeoJSON(w io.Writer, outs []Outline, classOf map[int32]int32) error {
	bw := bufio.NewWriter(w)
	var buf []byte
	buf = append(buf, `{"type":"FeatureCollection","features":[`...)
	for k, o := range outs {
		if k > 0 {
			buf = append(buf, ',')
		}
		buf = append(buf, "\n"+`{"type":"Feature","id":`...)
		buf = strconv.AppendInt(buf, int64(o.Label), 10)
		buf = append(buf, `,"properties":{"label":`...)
		buf = strconv.AppendInt(buf, int64(o.Label), 10)
		if classOf != nil {
			buf = append(buf, `,"class":`...)
			buf = strconv.AppendInt(buf, int64(classOf[o.Label]), 10)
		}
		kind := "Polygon"
		if len(o.Polygons) > 1 {
			kind = "MultiPolygon"
			buf = append(buf, `},"geometry":{"type":"MultiPolygon","coordinates":[`...)
		} else {
			buf = append(buf, `},"geometry":{"type":"Polygon","coordinates":`...)
		}
		for pk, p := range o.Polygons {
			if pk > 0 {
				buf = append(buf, ',')
			}
			buf = append(buf, '[')
			for rk, r := range p {
				if rk > 0 {
					buf = append(buf, ',')
				}
				buf = append(buf, '[')
				for i := 0; i <= len(r); i++ {
					q := r[i%len(r)]
					if i > 0 {
						buf = append(buf, ',')
					}
					buf = append(buf, '[')
					buf = strconv.AppendInt(buf, int64(q.X), 10)
					buf = append(buf, ',')
					buf = strconv.AppendInt(buf, int64(q.Y), 10)
					buf = append(buf, ']')
				}
				buf = append(buf, ']')
				if len(buf) > 1<<16 {
					if _, err := bw.Write(buf); err != nil {
						return err
					}
					buf = buf[:0]
				}
			}
			buf = append(buf, ']')
		}
		if kind == "MultiPolygon" {
			buf = append(buf, ']')
		}
		buf = append(buf, "}}"...)
	}
	buf = append(buf, "\n]}\n"...)
	if _, err := bw.Write(buf); err != nil {
		return err
	}
	return bw.Flush()
}
