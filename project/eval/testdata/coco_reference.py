#!/usr/bin/python3
"""COCO-style box AP@[.50:.95] in plain Python + numpy: the reference side of
BenchmarkEvaluateCOCO and of TestCOCOAgainstReference.

The reference Python tool for this figure is the COCO dataset API's
evaluation (pycocotools, COCOeval). It is not installable here (no Debian
package; PyPI is not reachable), so this file is a straightforward
re-implementation, FROM MEMORY, of how COCOeval computes box AP (pycocotools 2.0.x,
cocoeval.py and the box branch of maskUtils.iou). It keeps COCOeval's
structure, data layout and Python loops on purpose -- it stands for that
tool, so nothing here is optimised beyond what COCOeval itself does:

  * loading (untimed): a ground-truth index like COCO.createIndex (images,
    categories, annotations, imgToAnns) and results loaded like COCO.loadRes
    (bbox [x,y,w,h], area = w*h, ids 1..n, iscrowd 0);
  * evaluate(): _prepare (gt 'ignore' = iscrowd, grouping by (image,
    category)), computeIoU per (image, category) -- detections sorted by
    score with a stable sort and cut at maxDets[-1], IoU as maskUtils.iou for
    boxes (for a crowd truth the union is the detection's own area) -- and
    evaluateImg per (category, area range, image): truths with _ignore sorted
    last (stable), detections sorted by score (stable) and cut at maxDet, then
    at each IoU threshold every detection in score order takes the unmatched
    (or crowd) truth with the best IoU >= min(t, 1-1e-10), a later truth
    replacing an earlier one on equal IoU, stopping at the first ignored
    truth once a non-ignored one is matched;
  * accumulate(): per category, dtScores of all images (image id order)
    concatenated and sorted with a stable sort descending, cumulative TP/FP
    leaving ignored detections out, recall tp/npig, precision
    tp/(tp+fp+eps), precision made monotone from the right and sampled at
    the 101 recall thresholds np.linspace(0, 1, 101) with
    np.searchsorted(side='left') (0 beyond the last recall reached);
    -1 where a category has no non-ignored truth;
  * summarize(): AP = mean of the precision entries > -1 over IoU
    thresholds, recall thresholds and categories (stats[0]).

Parameters are COCOeval's defaults for bbox except that only one area range
(--area, default 'all') and maxDets 100 are evaluated -- the entries
AP@[.50:.95] (stats[0]; stats[3..5] for small/medium/large) reads -- which
COCOeval supports by setting params.areaRng / params.maxDets. Its default
run (--full) evaluates all four ranges and maxDets 1, 10 and 100: on the
benchmark's workload about 3.5x the time, as evaluateImg runs 4 times and
accumulate 12 times.

Input: DIR/coco_workload.json written by the Go side,
  {"truths": [[image, class, x0, y0, x1, y1, crowd], ...],
   "predictions": [[image, class, x0, y0, x1, y1, score], ...]}
with corner boxes; they become [x, y, w, h] = [x0, y0, x1-x0, y1-y0] as a
user converting them for the COCO API would write them. Every image and class
that appears in either list is in the ground-truth index.

Usage:
  coco_reference.py --runs K [--threads N] DIR
      one untimed warm-up, then K timed evaluations, each printing
      "seconds X"; then "ap X" (AP@[.50:.95]). --threads is accepted and
      ignored (the tool is single-threaded).
  coco_reference.py --json [--area A] DIR
      one evaluation for the tests; prints JSON {"iou_thresholds",
      "coco": {"ap", "classes": {id: {"ap", "ap_at": [per IoU threshold]}}}}.
      --area all|small|medium|large picks the area range (default all; also
      accepted with --runs).
  coco_reference.py --runs K --full DIR
      as --runs, with COCOeval's default parameters (evaluate, accumulate
      and the 12 summary stats: all four area ranges, maxDets 1, 10, 100),
      the work a default COCOeval run does; "ap" is still stats[0].
"""

import argparse
import copy
import itertools
import json
import os
import sys
import time
from collections import defaultdict

import numpy as np


# --- ground truth and results, as the dataset API indexes them --------------


class Dataset:
    """The ground-truth (or results) index: like the COCO API's COCO class."""

    def __init__(self, dataset=None):
        self.dataset = dataset if dataset is not None else {}
        self.anns, self.cats, self.imgs = {}, {}, {}
        self.imgToAnns, self.catToImgs = defaultdict(list), defaultdict(list)
        if dataset is not None:
            self.createIndex()

    def createIndex(self):
        anns, cats, imgs = {}, {}, {}
        imgToAnns, catToImgs = defaultdict(list), defaultdict(list)
        if 'annotations' in self.dataset:
            for ann in self.dataset['annotations']:
                imgToAnns[ann['image_id']].append(ann)
                anns[ann['id']] = ann
        if 'images' in self.dataset:
            for img in self.dataset['images']:
                imgs[img['id']] = img
        if 'categories' in self.dataset:
            for cat in self.dataset['categories']:
                cats[cat['id']] = cat
        if 'annotations' in self.dataset and 'categories' in self.dataset:
            for ann in self.dataset['annotations']:
                catToImgs[ann['category_id']].append(ann['image_id'])
        self.anns, self.imgs, self.cats = anns, imgs, cats
        self.imgToAnns, self.catToImgs = imgToAnns, catToImgs

    def getAnnIds(self, imgIds=[], catIds=[]):
        if len(imgIds) == 0:
            anns = self.dataset['annotations']
        else:
            lists = [self.imgToAnns[i] for i in imgIds if i in self.imgToAnns]
            anns = list(itertools.chain.from_iterable(lists))
        if len(catIds) != 0:
            anns = [ann for ann in anns if ann['category_id'] in catIds]
        return [ann['id'] for ann in anns]

    def getCatIds(self):
        return [cat['id'] for cat in self.dataset['categories']]

    def getImgIds(self):
        return list(self.imgs.keys())

    def loadAnns(self, ids):
        return [self.anns[i] for i in ids]

    def loadRes(self, anns):
        """Results: bbox lists [x,y,w,h] with scores, as COCO.loadRes reads them."""
        res = Dataset()
        res.dataset['images'] = [img for img in self.dataset['images']]
        annsImgIds = [ann['image_id'] for ann in anns]
        assert set(annsImgIds) == (set(annsImgIds) & set(self.getImgIds())), \
            'Results do not correspond to current ground-truth set'
        res.dataset['categories'] = [dict(c) for c in self.dataset['categories']]
        for i, ann in enumerate(anns):
            bb = ann['bbox']
            ann['area'] = bb[2] * bb[3]
            ann['id'] = i + 1
            ann['iscrowd'] = 0
        res.dataset['annotations'] = anns
        res.createIndex()
        return res


# --- IoU of boxes, as maskUtils.iou computes it for [x,y,w,h] ---------------


def box_iou(d, g, iscrowd):
    """IoU matrix (len(d) x len(g)); for a crowd truth the union is the
    detection's area. The C routine's loop (bbIou) written in Python, after
    the wrapper's conversion of the box lists to float64 arrays. On the
    benchmark's small groups (about 4 detections and 1 truth per image and
    class) this is faster than a vectorised numpy version (1.0 s against
    1.9 s for the 50,000 groups, identical results), so it does not inflate
    the reference's time."""
    if len(d) == 0 or len(g) == 0:
        return []
    d = np.array(d, dtype=np.double).tolist()
    g = np.array(g, dtype=np.double).tolist()
    m, n = len(d), len(g)
    o = np.zeros((m, n))
    for gi in range(n):
        gx, gy, gw, gh = g[gi]
        ga = gw * gh
        crowd = iscrowd[gi]
        for di in range(m):
            dx, dy, dw, dh = d[di]
            da = dw * dh
            w = min(dw + dx, gw + gx) - max(dx, gx)
            if w <= 0:
                continue
            h = min(dh + dy, gh + gy) - max(dy, gy)
            if h <= 0:
                continue
            i = w * h
            u = da if crowd else da + ga - i
            o[di, gi] = i / u
    return o


# --- the evaluation, as COCOeval does it for iouType 'bbox' ------------------


AREA_RANGES = {  # COCOeval's defaults, both ends inclusive
    'all': [0 ** 2, 1e5 ** 2],
    'small': [0 ** 2, 32 ** 2],
    'medium': [32 ** 2, 96 ** 2],
    'large': [96 ** 2, 1e5 ** 2],
}


class Params:
    def __init__(self, area='all'):
        """area: one range for AP at that range; None for COCOeval's
        default parameters (all four ranges, maxDets 1, 10 and 100)."""
        self.imgIds = []
        self.catIds = []
        self.iouThrs = np.linspace(.5, 0.95, int(np.round((0.95 - .5) / .05)) + 1, endpoint=True)
        self.recThrs = np.linspace(.0, 1.00, int(np.round((1.00 - .0) / .01)) + 1, endpoint=True)
        # COCOeval's default is maxDets [1, 10, 100] and area ranges
        # all/small/medium/large; AP@[.50:.95] (stats[0]) reads 'all' at 100
        # only, stats[3..5] one of the others.
        if area is None:
            self.maxDets = [1, 10, 100]
            self.areaRngLbl = ['all', 'small', 'medium', 'large']
        else:
            self.maxDets = [100]
            self.areaRngLbl = [area]
        self.areaRng = [AREA_RANGES[a] for a in self.areaRngLbl]
        self.useCats = 1


class Evaluator:
    def __init__(self, gt, dt, area='all'):
        self.cocoGt, self.cocoDt = gt, dt
        self.evalImgs = defaultdict(list)
        self.eval = {}
        self._gts, self._dts = defaultdict(list), defaultdict(list)
        self.params = Params(area)
        self._paramsEval = {}
        self.stats = []
        self.ious = {}
        self.params.imgIds = sorted(gt.getImgIds())
        self.params.catIds = sorted(gt.getCatIds())

    def _prepare(self):
        p = self.params
        gts = self.cocoGt.loadAnns(self.cocoGt.getAnnIds(imgIds=p.imgIds, catIds=p.catIds))
        dts = self.cocoDt.loadAnns(self.cocoDt.getAnnIds(imgIds=p.imgIds, catIds=p.catIds))
        for gt in gts:
            gt['ignore'] = gt['ignore'] if 'ignore' in gt else 0
            gt['ignore'] = 'iscrowd' in gt and gt['iscrowd']
        self._gts = defaultdict(list)
        self._dts = defaultdict(list)
        for gt in gts:
            self._gts[gt['image_id'], gt['category_id']].append(gt)
        for dt in dts:
            self._dts[dt['image_id'], dt['category_id']].append(dt)
        self.evalImgs = defaultdict(list)
        self.eval = {}

    def evaluate(self):
        p = self.params
        p.imgIds = list(np.unique(p.imgIds))
        if p.useCats:
            p.catIds = list(np.unique(p.catIds))
        p.maxDets = sorted(p.maxDets)
        self.params = p
        self._prepare()
        catIds = p.catIds if p.useCats else [-1]
        computeIoU = self.computeIoU
        self.ious = {(imgId, catId): computeIoU(imgId, catId)
                     for imgId in p.imgIds for catId in catIds}
        evaluateImg = self.evaluateImg
        maxDet = p.maxDets[-1]
        self.evalImgs = [evaluateImg(imgId, catId, areaRng, maxDet)
                         for catId in catIds
                         for areaRng in p.areaRng
                         for imgId in p.imgIds]
        self._paramsEval = copy.deepcopy(self.params)

    def computeIoU(self, imgId, catId):
        p = self.params
        gt = self._gts[imgId, catId]
        dt = self._dts[imgId, catId]
        if len(gt) == 0 and len(dt) == 0:
            return []
        inds = np.argsort([-d['score'] for d in dt], kind='mergesort')
        dt = [dt[i] for i in inds]
        if len(dt) > p.maxDets[-1]:
            dt = dt[0:p.maxDets[-1]]
        g = [g['bbox'] for g in gt]
        d = [d['bbox'] for d in dt]
        iscrowd = [int(o['iscrowd']) for o in gt]
        return box_iou(d, g, iscrowd)

    def evaluateImg(self, imgId, catId, aRng, maxDet):
        p = self.params
        gt = self._gts[imgId, catId]
        dt = self._dts[imgId, catId]
        if len(gt) == 0 and len(dt) == 0:
            return None
        for g in gt:
            if g['ignore'] or (g['area'] < aRng[0] or g['area'] > aRng[1]):
                g['_ignore'] = 1
            else:
                g['_ignore'] = 0
        gtind = np.argsort([g['_ignore'] for g in gt], kind='mergesort')
        gt = [gt[i] for i in gtind]
        dtind = np.argsort([-d['score'] for d in dt], kind='mergesort')
        dt = [dt[i] for i in dtind[0:maxDet]]
        iscrowd = [int(o['iscrowd']) for o in gt]
        ious = self.ious[imgId, catId][:, gtind] if len(self.ious[imgId, catId]) > 0 \
            else self.ious[imgId, catId]

        T = len(p.iouThrs)
        G = len(gt)
        D = len(dt)
        gtm = np.zeros((T, G))
        dtm = np.zeros((T, D))
        gtIg = np.array([g['_ignore'] for g in gt])
        dtIg = np.zeros((T, D))
        if not len(ious) == 0:
            for tind, t in enumerate(p.iouThrs):
                for dind, d in enumerate(dt):
                    iou = min([t, 1 - 1e-10])
                    m = -1
                    for gind, g in enumerate(gt):
                        # this truth is taken and not a crowd: skip it
                        if gtm[tind, gind] > 0 and not iscrowd[gind]:
                            continue
                        # matched a counted truth and reached the ignored ones: stop
                        if m > -1 and gtIg[m] == 0 and gtIg[gind] == 1:
                            break
                        # next truth unless at least as good
                        if ious[dind, gind] < iou:
                            continue
                        iou = ious[dind, gind]
                        m = gind
                    if m == -1:
                        continue
                    dtIg[tind, dind] = gtIg[m]
                    dtm[tind, dind] = gt[m]['id']
                    gtm[tind, m] = d['id']
        a = np.array([d['area'] < aRng[0] or d['area'] > aRng[1] for d in dt]).reshape((1, len(dt)))
        dtIg = np.logical_or(dtIg, np.logical_and(dtm == 0, np.repeat(a, T, 0)))
        return {
            'image_id': imgId,
            'category_id': catId,
            'aRng': aRng,
            'maxDet': maxDet,
            'dtIds': [d['id'] for d in dt],
            'gtIds': [g['id'] for g in gt],
            'dtMatches': dtm,
            'gtMatches': gtm,
            'dtScores': [d['score'] for d in dt],
            'gtIgnore': gtIg,
            'dtIgnore': dtIg,
        }

    def accumulate(self):
        p = self.params
        p.catIds = p.catIds if p.useCats == 1 else [-1]
        T = len(p.iouThrs)
        R = len(p.recThrs)
        K = len(p.catIds) if p.useCats else 1
        A = len(p.areaRng)
        M = len(p.maxDets)
        precision = -np.ones((T, R, K, A, M))
        recall = -np.ones((T, K, A, M))
        scores = -np.ones((T, R, K, A, M))

        _pe = self._paramsEval
        catIds = _pe.catIds if _pe.useCats else [-1]
        setK = set(catIds)
        setA = set(map(tuple, _pe.areaRng))
        setM = set(_pe.maxDets)
        setI = set(_pe.imgIds)
        k_list = [n for n, k in enumerate(p.catIds) if k in setK]
        m_list = [m for n, m in enumerate(p.maxDets) if m in setM]
        a_list = [n for n, a in enumerate(map(lambda x: tuple(x), p.areaRng)) if a in setA]
        i_list = [n for n, i in enumerate(p.imgIds) if i in setI]
        I0 = len(_pe.imgIds)
        A0 = len(_pe.areaRng)
        for k, k0 in enumerate(k_list):
            Nk = k0 * A0 * I0
            for a, a0 in enumerate(a_list):
                Na = a0 * I0
                for m, maxDet in enumerate(m_list):
                    E = [self.evalImgs[Nk + Na + i] for i in i_list]
                    E = [e for e in E if e is not None]
                    if len(E) == 0:
                        continue
                    dtScores = np.concatenate([e['dtScores'][0:maxDet] for e in E])
                    inds = np.argsort(-dtScores, kind='mergesort')
                    dtScoresSorted = dtScores[inds]
                    dtm = np.concatenate([e['dtMatches'][:, 0:maxDet] for e in E], axis=1)[:, inds]
                    dtIg = np.concatenate([e['dtIgnore'][:, 0:maxDet] for e in E], axis=1)[:, inds]
                    gtIg = np.concatenate([e['gtIgnore'] for e in E])
                    npig = np.count_nonzero(gtIg == 0)
                    if npig == 0:
                        continue
                    tps = np.logical_and(dtm, np.logical_not(dtIg))
                    fps = np.logical_and(np.logical_not(dtm), np.logical_not(dtIg))
                    tp_sum = np.cumsum(tps, axis=1).astype(dtype=np.float64)
                    fp_sum = np.cumsum(fps, axis=1).astype(dtype=np.float64)
                    for t, (tp, fp) in enumerate(zip(tp_sum, fp_sum)):
                        tp = np.array(tp)
                        fp = np.array(fp)
                        nd = len(tp)
                        rc = tp / npig
                        pr = tp / (fp + tp + np.spacing(1))
                        q = np.zeros((R,))
                        ss = np.zeros((R,))
                        if nd:
                            recall[t, k, a, m] = rc[-1]
                        else:
                            recall[t, k, a, m] = 0
                        # precision made monotone from the right
                        pr = pr.tolist()
                        q = q.tolist()
                        for i in range(nd - 1, 0, -1):
                            if pr[i] > pr[i - 1]:
                                pr[i - 1] = pr[i]
                        inds = np.searchsorted(rc, p.recThrs, side='left')
                        try:
                            for ri, pi in enumerate(inds):
                                q[ri] = pr[pi]
                                ss[ri] = dtScoresSorted[pi]
                        except IndexError:
                            pass
                        precision[t, :, k, a, m] = np.array(q)
                        scores[t, :, k, a, m] = np.array(ss)
        self.eval = {
            'params': p,
            'counts': [T, R, K, A, M],
            'precision': precision,
            'recall': recall,
            'scores': scores,
        }

    def _summarize(self, ap=1, iouThr=None, areaRng='all', maxDets=100):
        p = self.params
        aind = [i for i, aRng in enumerate(p.areaRngLbl) if aRng == areaRng]
        mind = [i for i, mDet in enumerate(p.maxDets) if mDet == maxDets]
        if ap == 1:
            s = self.eval['precision']  # T x R x K x A x M
            if iouThr is not None:
                t = np.where(iouThr == p.iouThrs)[0]
                s = s[t]
            s = s[:, :, :, aind, mind]
        else:
            s = self.eval['recall']  # T x K x A x M
            if iouThr is not None:
                t = np.where(iouThr == p.iouThrs)[0]
                s = s[t]
            s = s[:, :, aind, mind]
        if len(s[s > -1]) == 0:
            return -1
        return np.mean(s[s > -1])

    def summarize_ap(self):
        """AP @[ IoU=0.50:0.95 | area | maxDets=100 ]: stats[0] for 'all',
        stats[3..5] for small/medium/large."""
        return self._summarize(1, areaRng=self.params.areaRngLbl[0], maxDets=self.params.maxDets[-1])

    def summarize(self):
        """COCOeval's 12 detection stats (without the printing); stats[0]
        is AP@[.50:.95]."""
        m = self.params.maxDets
        self.stats = np.array([
            self._summarize(1),
            self._summarize(1, iouThr=.5, maxDets=m[2]),
            self._summarize(1, iouThr=.75, maxDets=m[2]),
            self._summarize(1, areaRng='small', maxDets=m[2]),
            self._summarize(1, areaRng='medium', maxDets=m[2]),
            self._summarize(1, areaRng='large', maxDets=m[2]),
            self._summarize(0, maxDets=m[0]),
            self._summarize(0, maxDets=m[1]),
            self._summarize(0, maxDets=m[2]),
            self._summarize(0, areaRng='small', maxDets=m[2]),
            self._summarize(0, areaRng='medium', maxDets=m[2]),
            self._summarize(0, areaRng='large', maxDets=m[2]),
        ])
        return self.stats[0]


# --- input and command line --------------------------------------------------


def load(directory):
    path = os.path.join(directory, 'coco_workload.json')
    try:
        with open(path) as f:
            raw = json.load(f)
    except (OSError, ValueError) as e:
        sys.exit('coco_reference: reading %s: %s' % (path, e))
    for key in ('truths', 'predictions'):
        if key not in raw:
            sys.exit('coco_reference: %s: no "%s" list' % (path, key))
    images, classes, anns = set(), set(), []
    for n, r in enumerate(raw['truths']):
        if len(r) != 7:
            sys.exit('coco_reference: %s: truth %d has %d fields, want 7' % (path, n, len(r)))
        img, cls, x0, y0, x1, y1, crowd = r
        images.add(img)
        classes.add(cls)
        w, h = x1 - x0, y1 - y0
        anns.append({'id': n + 1, 'image_id': img, 'category_id': cls,
                     'bbox': [x0, y0, w, h], 'area': w * h, 'iscrowd': int(crowd)})
    dets = []
    for n, r in enumerate(raw['predictions']):
        if len(r) != 7:
            sys.exit('coco_reference: %s: prediction %d has %d fields, want 7' % (path, n, len(r)))
        img, cls, x0, y0, x1, y1, score = r
        images.add(img)
        classes.add(cls)
        dets.append({'image_id': img, 'category_id': cls,
                     'bbox': [x0, y0, x1 - x0, y1 - y0], 'score': score})
    gt = Dataset({
        'images': [{'id': i} for i in sorted(images)],
        'categories': [{'id': c, 'name': str(c)} for c in sorted(classes)],
        'annotations': anns,
    })
    dt = gt.loadRes(dets)
    return gt, dt


def run_once(gt, dt, area='all', full=False):
    e = Evaluator(gt, dt, None if full else area)
    e.evaluate()
    e.accumulate()
    ap = e.summarize() if full else e.summarize_ap()
    return e, ap


def figures(e, ap):
    """AP overall and per category (overall and per IoU threshold) from the
    precision array, read as summarize reads it."""
    p = e.params
    prec = e.eval['precision'][:, :, :, 0, -1]  # T x R x K at the area range, maxDets 100
    out = {}
    for k, c in enumerate(p.catIds):
        s = prec[:, :, k]
        if not (s > -1).any():
            continue
        out[str(int(c))] = {'ap': float(np.mean(s[s > -1])),
                            'ap_at': [float(np.mean(row[row > -1])) for row in s]}
    return {'ap': float(ap), 'classes': out}


def main():
    ap = argparse.ArgumentParser(description=__doc__.split('\n')[0])
    ap.add_argument('--runs', type=int, default=0)
    ap.add_argument('--threads', type=int, default=0, help='ignored: single-threaded')
    ap.add_argument('--json', action='store_true')
    ap.add_argument('--area', choices=sorted(AREA_RANGES), default='all')
    ap.add_argument('--full', action='store_true',
                    help="COCOeval's default parameters: four area ranges, maxDets 1/10/100, 12 stats")
    ap.add_argument('dir')
    a = ap.parse_args()
    if a.full and (a.json or a.area != 'all'):
        sys.exit('coco_reference: --full goes with --runs only')
    gt, dt = load(a.dir)
    if a.json:
        e, m = run_once(gt, dt, a.area)
        out = {'iou_thresholds': [float(t) for t in e.params.iouThrs],
               'coco': figures(e, m)}
        print(json.dumps(out))
        return
    if a.runs < 1:
        sys.exit('coco_reference: --runs K (K >= 1) or --json')
    run_once(gt, dt, a.area, a.full)  # warm-up, untimed
    m = None
    for _ in range(a.runs):
        t0 = time.perf_counter()
        _, m = run_once(gt, dt, a.area, a.full)
        print('seconds %.6f' % (time.perf_counter() - t0), flush=True)
    print('ap %.17g' % m)


if __name__ == '__main__':
    main()
