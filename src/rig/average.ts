/**
 * Robust pose averaging with thresholds suited to single-view PnP estimates
 * of the same relative pose: a sample agrees when its rotation is within 3°
 * and its translation within max(5 % of the median distance, 2 cm) of the
 * robust average. Flipped or mislabelled views differ by far more.
 */
import { averagePoses } from '../geometry/averaging.js';
import type { Pose } from '../geometry/se3.js';

export const AGREE_ROTATION_RAD = (3 * Math.PI) / 180;
export const AGREE_TRANSLATION_FRACTION = 0.05;
export const AGREE_TRANSLATION_MIN_M = 0.02;

export function averagePosesRobust(samples: Pose[]): { pose: Pose; inliers: number; inlierMask: boolean[] } {
  const d = samples.map((s) => Math.hypot(s.t[0]!, s.t[1]!, s.t[2]!)).sort((a, b) => a - b);
  const scale = d[d.length >> 1] ?? 0;
  const avg = averagePoses(samples, {
    rotation: { thresholdRad: AGREE_ROTATION_RAD },
    translation: { thresholdM: Math.max(AGREE_TRANSLATION_FRACTION * scale, AGREE_TRANSLATION_MIN_M) },
  });
  return { pose: avg.T, inliers: avg.inliers.filter(Boolean).length, inlierMask: avg.inliers };
}
