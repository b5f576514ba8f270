// Package agree measures how well annotators agree: box matching, the kappa family and Krippendorff's alpha. Pure computations: no SQL, no GUI.
package agree
