// Package render draws cleave's pictures: the colours of a label map
// (LabelColours: neighbours get different colours, label 0 none), a
// bitmap font of digits for object numbers (DrawNumber), a perceptually
// uniform colour scale (Cividis) and the heat map of a parameter search
// (Heatmap). It knows nothing of files, flags or segmentation.
package render
