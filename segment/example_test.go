package segment_test

import (
	"context"
	"fmt"

	"github.com/cleave-seg/cleave/segment"
)

// Segment a 40 x 30 image of two bright squares (intensity 0.9) on a dark
// field (0.1) into two classes with the dark one as background: the label
// map holds the two squares as objects 1 and 2 on background 0, each
// within its square and covering nearly all of it (the outline may cut a
// square's corner pixels).
func ExampleRun() {
	const w, h = 40, 30
	lum := make([]float32, w*h)
	for y := range h {
		for x := range w {
			lum[y*w+x] = 0.1
			if y >= 8 && y < 20 && (x >= 5 && x < 15 || x >= 24 && x < 34) {
				lum[y*w+x] = 0.9
			}
		}
	}
	p := segment.DefaultParams()
	p.Classes, p.Background = 2, segment.BackgroundDark
	res, err := segment.Run(context.Background(), segment.Input{Width: w, Height: h, Planes: [][]float32{lum}, Luminance: lum}, p)
	if err != nil {
		panic(err)
	}
	area, inside := map[int32]int{}, true
	for i, l := range res.Labels.Pix {
		area[l]++
		if l != 0 && lum[i] != 0.9 {
			inside = false
		}
	}
	fmt.Println("objects:", res.NumObjects)
	fmt.Println("left object at (10, 14):", res.Labels.At(10, 14), "right at (29, 14):", res.Labels.At(29, 14))
	fmt.Println("inside the squares:", inside, "at least 95% of each:", area[1] >= 114 && area[2] >= 114)
	// Output:
	// objects: 2
	// left object at (10, 14): 1 right at (29, 14): 2
	// inside the squares: true at least 95% of each: true
}
