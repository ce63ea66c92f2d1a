// Package figures draws filigree's pictures of a run: a wedge (cone) diagram
// of the survey, a Cartesian slice through the gridded fields, the footprint
// on the sky in the Mollweide equal-area projection, the redshift
// distribution, the volume and mass fractions of the web classes and the
// density distribution per class; and it writes the self-contained HTML
// report of a run that holds them.
//
// Every figure reads the same Inputs: the run's per-galaxy table (with its
// provenance in the table metadata), optionally the fields cube, the run's
// summary and the survey footprint. Figures are drawn with gonum.org/v1/plot
// and written as PNG, SVG or PDF by the output file's extension.
//
// The web classes keep one colour each in every figure (ClassColors), chosen
// so that they differ in lightness as well as hue and therefore stay apart for
// readers with any form of colour-vision deficiency and in greyscale print.
package figures
