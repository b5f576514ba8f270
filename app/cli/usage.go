package cli

// usage is the help text; keep it in step with the commands table and the
// README.
const usage = `Usage: boxwright [COMMAND [ARGS]]

With no command, opens the window.

Commands:
  open PROJECT.boxw [--annotator NAME]  open a project in the window
  new PROJECT.boxw | postgres://… | @NAME
                                        create an empty project (never overwrites)
  add-images PROJECT.boxw PATH...       add image files and folders (recursive)
        [--max-megapixels N] [--json]
  relink PROJECT.boxw FOLDER [--json]   find moved image files by their content
  classes PROJECT.boxw list [--json]
  classes PROJECT.boxw add NAME...
  classes PROJECT.boxw rename OLD NEW
  classes PROJECT.boxw merge FROM INTO  move FROM's labels to INTO, delete FROM
  classes PROJECT.boxw delete NAME      only when it has no labels
  info PROJECT.boxw [--json]            counts of images, labels, suggestions
  images PROJECT.boxw [--annotator NAME] [--json]
                                        one line per image, with NAME's status
  check PROJECT.boxw                    full consistency check of the file
  recover DAMAGED.boxw NEW.boxw         copy what can still be read into a new project
  import PROJECT.boxw --layout json|xml|txt [--annotator NAME] PATH
        [--images DIR] [--classes FILE] [--map FROM=TO]... [--create-classes]
        [--strict] [--skip-unmatched] [--again refuse|replace|append] [--json]
                                        import labels (all or nothing)
  export PROJECT.boxw --layout json|xml|txt --annotator NAME --out DIR
        [--split 80/10/10] [--seed N] [--images copy|link|none] [--json]
                                        write a split dataset
  suggestions import PROJECT.boxw FILE --source NAME [--layout json|txt|csv]
        [--classes FILE] [--min-score S] [--nms IOU|off] [--map FROM=TO]...
        [--create-classes|--drop-unknown] [--json]
                                        import a model's predictions for review
  suggestions stats PROJECT.boxw [--source NAME] [--json]
                                        what the review decisions say per source
  similar PROJECT.boxw --image PATH --exemplar x0,y0,x1,y1 [--class NAME]
        [--threshold S] [--max-results 200] [--scales 0.8:1.25:5]
        [--rotations] [--feature gray|gradient|color] [--save] [--json]
                                        objects like the example in one image
  eval PROJECT.boxw --truth ANNOTATOR (--source NAME | --predictions FILE)
        [--protocol voc|coco] [--iou 0.5] [--interpolation all|11|101|step]
        [--plus-one] [--threshold 0.5] [--json]
                                        score a model against ground truth
  agree PROJECT.boxw --annotators A,B[,C...] [--iou 0.5] [--class-aware]
        [--worst N] [--json|--csv]      box agreement, kappa, alpha, worst images
  consensus PROJECT.boxw --annotators A,B[,C...] [--iou 0.5] [--min K]
        [--median]                      store the consensus as annotator "consensus"
  kappa --table FILE.csv [--weights none|linear|quadratic|W.csv] [--json]
  kappa --ratings FILE.csv [--level nominal|ordinal|interval|ratio]
        [--weights W] [--categories a,b,c] [--json]
                                        Cohen's, Fleiss' kappa, Krippendorff's alpha
  train PROJECT.boxw --annotator NAME [--classes a,b] [--minutes M | --epochs N]
        [--validation 0.2] [--seed S] [--threads N] [--rotations] [--continue]
        [--json]                        train a detector on the project's labels
  detect PROJECT.boxw [--model NAME] [--images unlabelled|all] [--min-score S]
        [--nms IOU|off] [--source NAME] [--save] [--json]
                                        run the current (or named) model
  detect PROJECT.boxw --model FILE.onnx [--layout auto|detections|corners-scores|
        centre-objectness-scores|centre-scores] [--input WxH] [--letterbox[=false]]
        [--names FILE] [--onnxruntime LIB] [--describe] [--images unlabelled|all]
        [--limit N] [--min-score S] [--nms IOU|off] [--map FROM=TO]...
        [--create-classes|--drop-unknown] [--save] [--json]
                                        run your own ONNX detector (README: your own model)
  models PROJECT.boxw [--use NAME] [--json]
                                        the detectors trained here (--use: make current)
  models PROJECT.boxw export [NAME] --out FILE.onnx [--input WxH] [--json]
                                        write a trained detector as ONNX, described beside it
  copy FROM TO [--json]                 copy a whole project into a new one, between files
                                        and servers (postgres://... or @NAME), all or nothing
  demo DIR [--no-open] [--seed N]       make the invented harbour demo in DIR
  team PROJECT list | add NAME --role annotator|reviewer|owner | remove NAME
                                        the members of a server project
  assign PROJECT --annotators A,B[,C...] [--each K] | assign PROJECT --show
                                        hand a server project's images out
  help                                  this text

A PROJECT is a file (PROJECT.boxw), a server project's postgres://USER@HOST/DB
address, or @NAME from the connections file (README: working as a team).

Every command exits non-zero with a message on stderr when it fails.
`
