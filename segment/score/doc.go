// Package score compares two label maps of the same image: a segmentation
// and a ground truth. It offers partition measures that ignore what the labels
// mean (Rand index and adjusted Rand index, Hubert and Arabie 1985; variation
// of information, Meila 2007; segmentation covering, Arbelaez et al. 2011),
// object measures that treat label 0 as background (foreground Dice and IoU;
// object matching at IoU > 0.5) and boundary precision, recall and F with a
// pixel tolerance (after Martin, Fowlkes and Malik 2004). Label maps are flat
// []int32 slices of equal length; the boundary measures read them row-major
// with a given width. The package knows nothing of files or flags.
package score
