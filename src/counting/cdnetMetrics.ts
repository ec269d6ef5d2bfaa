/** Pixel counts of a foreground mask against ground truth. */
export interface Confusion {
  /** Foreground in both. */
  tp: number;
  /** Foreground detected where the truth is background. */
  fp: number;
  /** Background in both. */
  tn: number;
  /** Background detected where the truth is foreground. */
  fn: number;
}

/** The change-detection metrics of the CDnet benchmark; NaN where a ratio has no denominator. */
export interface CdnetMetrics {
  readonly recall: number;
  readonly specificity: number;
  /** False positive rate. */
  readonly fpr: number;
  /** False negative rate. */
  readonly fnr: number;
  /** Percentage of wrong classifications, 0..100. */
  readonly pwc: number;
  readonly precision: number;
  readonly fMeasure: number;
}

/**
 * The seven metrics of the changedetection.net benchmark (Goyette, Jodoin, Porikli, Konrad &
 * Ishwar, "changedetection.net: A new change detection benchmark dataset", CVPR Workshops 2012):
 * Recall = TP/(TP+FN), Specificity = TN/(TN+FP), FPR = FP/(FP+TN), FNR = FN/(TP+FN),
 * PWC = 100·(FN+FP)/(TP+FN+FP+TN), Precision = TP/(TP+FP), F = 2·Pr·Re/(Pr+Re).
 *
 * Example: TP 80, FP 20, TN 890, FN 10 → Recall 0.889, Precision 0.8, PWC 3.
 */
export function cdnetMetrics(c: Confusion): CdnetMetrics {
  const { tp, fp, tn, fn } = c;
  const ratio = (a: number, b: number) => (b > 0 ? a / b : Number.NaN);
  const recall = ratio(tp, tp + fn);
  const precision = ratio(tp, tp + fp);
  return {
    recall,
    specificity: ratio(tn, tn + fp),
    fpr: ratio(fp, fp + tn),
    fnr: ratio(fn, tp + fn),
    pwc: ratio(100 * (fn + fp), tp + fn + fp + tn),
    precision,
    fMeasure: recall + precision > 0 ? (2 * precision * recall) / (precision + recall) : Number.NaN,
  };
}

/** CDnet ground-truth labels (Goyette et al. 2012): 0 static, 50 shadow, 85 outside the region of interest, 170 unknown motion, 255 moving. */
export const CdnetLabel = { static: 0, shadow: 50, outside: 85, unknown: 170, moving: 255 } as const;

/**
 * Adds a detected mask (0/1) compared with a ground-truth mask to `into`. Truth follows the CDnet
 * labels: 255 is foreground, 0 and 50 (shadow) background, 85 and 170 are not scored. A plain
 * binary truth (0/1 or 0/255) works too.
 */
export function addConfusion(detected: Uint8Array, truth: Uint8Array, into: Confusion): Confusion {
  if (detected.length !== truth.length) throw new RangeError(`mask has ${detected.length} pixels, truth ${truth.length}`);
  const binary = truth.every((v) => v === 0 || v === 1);
  for (let i = 0; i < truth.length; i++) {
    const t = truth[i];
    let fg: boolean;
    if (binary) fg = t === 1;
    else if (t === CdnetLabel.outside || t === CdnetLabel.unknown) continue;
    else fg = t >= 128 && t !== CdnetLabel.unknown;
    const d = detected[i] !== 0;
    if (fg && d) into.tp++;
    else if (fg) into.fn++;
    else if (d) into.fp++;
    else into.tn++;
  }
  return into;
}
