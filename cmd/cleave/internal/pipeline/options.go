package pipeline

import (
	"github.com/cleave-seg/cleave/imageio"
	"github.com/cleave-seg/cleave/segment"
)

// Options are the checked, typed options of one segmentation: what each
// stage of the pipeline takes. A command builds them from its Request.
type Options struct {
	Load      imageio.LoadOptions
	Selection imageio.Selection
	Features  imageio.FeatureOptions
	// FlattenRadii, when above 0, sets Features.Flatten of each image to
	// this many times its object radius, estimated on its unflattened
	// luminance (affinity.ObjectScale); an image with no object scale is
	// not flattened.
	FlattenRadii float64
	Params       segment.Params
	// PixelSize is the size of one pixel in Unit for the region table
	// (0: the size the file states, converted to Unit when both are
	// metric lengths); Unit "" is DefaultUnit with a PixelSize, else the
	// file's unit.
	PixelSize float64
	Unit      string
	// LabelsFormat is the format of the label and class maps,
	// imageio.LabelsPNG or imageio.LabelsTIFF.
	LabelsFormat string
	// EveryPlane tells that every plane of a stack is segmented on its own
	// (Request.Planes "all"), so no plane counts as unused.
	EveryPlane bool
}

// Voice is how the pipeline speaks for the command that runs it: the
// version written into every record, and the command's wording of
// parameter names. The pipeline's messages name a parameter the way the
// libraries do: bare in errors, in backquotes in advice ("choose another
// `out`"); Error and Message rewrite them for the user. A nil function
// leaves the text as it is.
type Voice struct {
	Version string
	Error   func(error) error
	Message func(string) string
}

// Err is err in the command's words (Voice.Error).
func (v Voice) Err(err error) error {
	if v.Error == nil || err == nil {
		return err
	}
	return v.Error(err)
}

// Msg is the message s in the command's words (Voice.Message).
func (v Voice) Msg(s string) string {
	if v.Message == nil {
		return s
	}
	return v.Message(s)
}
