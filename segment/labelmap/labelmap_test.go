package labelmap

import "testing"

// The expected values are worked by hand on a 3 x 2 map.
func TestMap(t *testing.T) {
	m := New(3, 2)
	if len(m.Pix) != 6 || m.Width != 3 || m.Height != 2 || m.Max() != 0 {
		t.Fatalf("New(3, 2) = %+v", m)
	}
	copy(m.Pix, []int32{0, 1, 1, 2, 7, 0})
	if got := m.At(1, 1); got != 7 {
		t.Errorf("At(1, 1) = %d, want 7", got)
	}
	if got := m.At(2, 0); got != 1 {
		t.Errorf("At(2, 0) = %d, want 1", got)
	}
	if got := m.Max(); got != 7 {
		t.Errorf("Max = %d, want 7", got)
	}
	if got := (Map{Pix: []int32{-3, -1}, Width: 2, Height: 1}).Max(); got != 0 {
		t.Errorf("Max of negative labels = %d, want 0", got)
	}
	if err := m.Check(); err != nil {
		t.Errorf("Check: %v", err)
	}
	if !m.SameSize(New(3, 2)) || m.SameSize(New(2, 3)) {
		t.Error("SameSize wrong for 3x2 against 3x2 and 2x3")
	}
}

func TestCheck(t *testing.T) {
	for _, tc := range []struct {
		m    Map
		want string
	}{
		{Map{Pix: make([]int32, 5), Width: 3, Height: 2}, "label map: 5 labels for a 3x2 image"},
		{Map{}, "label map: 0 labels for a 0x0 image"},
		{Map{Pix: nil, Width: 0, Height: 4}, "label map: 0 labels for a 0x4 image"},
	} {
		err := tc.m.Check()
		if err == nil || err.Error() != tc.want {
			t.Errorf("Check(%dx%d, %d labels) = %v, want %q", tc.m.Width, tc.m.Height, len(tc.m.Pix), err, tc.want)
		}
	}
}
