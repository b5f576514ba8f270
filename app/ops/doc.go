// Package ops holds the operations that the command line and the window
// share: imports and exports of datasets and suggestions, agreement and
// evaluation read from a project, the exemplar search's storage, the demo,
// a person's labelling session with its undo history, charts as images and
// the number formats of reports. It knows no GUI toolkit and parses no flags;
// domain computations stay in project, suggest and their sub-packages.
package ops
