package gui

import "fyne.io/fyne/v2/dialog"

func (u *ui) showCautions() {
	dialog.ShowInformation("Cautions", cautionLong, u.win)
}

func (u *ui) showAbout() {
	dialog.ShowInformation("About Boxwright", "Boxwright — a workbench for bounding-box datasets.\nProjects are single SQLite files (.boxw); everything runs offline.", u.win)
}

const cautionShort = "Images of people or vehicles can hold personal data (faces, number plates). Follow your organisation's rules and local law when storing and sharing them."

const cautionLong = `Personal data: images of people or vehicles can hold personal data (faces, number plates) that data-protection law governs. Follow your organisation's rules and local law on storing and sharing them.

Agreement figures: the verbal bands shown beside agreement figures are conventions from the literature, not acceptance criteria.

Model figures and suggestions: average precision and suggested score thresholds describe this model on these images as labelled here, not performance elsewhere. Suggestions accepted in bulk carry the model's mistakes into the ground truth; review samples of them.

Models from elsewhere: a detector run from an ONNX file brings the biases of the data it was trained on. Its suggestions are proposals to check; its source name records the file and its version, so keep that with any dataset you hand on.

Safety: datasets for safety-relevant detectors need the validation that their field's standards require; Boxwright's figures do not replace it.`
