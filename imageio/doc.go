// Package imageio reads images into float32 planes, derives the features a
// segmentation graph is built on, and writes label maps and overlays.
//
// Decoding (Load, Decode) detects PNG, TIFF, JPEG, BMP, GIF and WebP by
// content, refuses oversized images from the header before allocating
// pixels, keeps 16-bit samples at full precision and applies JPEG EXIF
// orientation. MakeFeatures turns an Image into normalized feature planes
// (Rec. 709 luma or CIE L*a*b*), with optional shading correction by a
// Gaussian background estimate, plus a display plane for overlays and a raw
// plane in the image's units for region tables. EncodeLabels, ReadLabels
// and EncodeOverlay handle label maps; WriteAtomic makes every output
// appear whole or not at all. The package knows nothing of graphs or
// eigensolvers.
package imageio
