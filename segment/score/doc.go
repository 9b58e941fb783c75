// Package score compares two label maps of the same image: a segmentation
// and a ground truth. It offers partition measures that ignore what the labels
// mean (Rand index and adjusted Rand index, Hubert and Arabie 1985; variation
// of information, Meila 2007) and object measures that treat label 0 as
// background (foreground Dice and IoU; object matching at IoU > 0.5). Label
// maps are flat []int32 slices of equal length in any fixed pixel order; the
// package knows nothing of files or flags.
package score
