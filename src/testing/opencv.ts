/**
 * Loads @techstark/opencv-js (OpenCV 4.12 compiled to WebAssembly) once per
 * test process, for reference checks.
 *
 * The package is a UMD emscripten build: importing it gives the module
 * object, whose runtime may still be initialising. That object also has a
 * `then` method that calls back with the module itself, so it must never be
 * awaited or returned from an async function (the promise machinery would
 * follow `then` forever). We wait through `then(callback)` and hand the
 * module back wrapped in `{ cv }`.
 *
 * It is loaded with Node's own `require` (createRequire): a dynamic
 * `import()` inside vitest sends the 10 MB file through the transform
 * pipeline and stalled the worker for minutes; `require` loads in < 1 s.
 *
 * Usage (in a test file):
 *   let cv: OpenCv;
 *   beforeAll(async () => { ({ cv } = await loadOpenCv()); }, OPENCV_LOAD_TIMEOUT_MS);
 */
import { createRequire } from 'node:module';
import type * as OpenCvNamespace from '@techstark/opencv-js';

/**
 * The OpenCV namespace, plus the bindings this build exports that the
 * package's type declarations lack (checked by listing the module's keys).
 */
export type OpenCv = typeof OpenCvNamespace & {
  /**
   * cv::fisheye::projectPoints(objectPoints, imagePoints, rvec, tvec, K, D,
   * alpha = 0, jacobian = noArray()).
   */
  fisheye_projectPoints(
    objectPoints: OpenCvNamespace.Mat,
    imagePoints: OpenCvNamespace.Mat,
    rvec: OpenCvNamespace.Mat,
    tvec: OpenCvNamespace.Mat,
    K: OpenCvNamespace.Mat,
    D: OpenCvNamespace.Mat,
    alpha?: number,
    jacobian?: OpenCvNamespace.Mat,
  ): void;
};

/** Generous: the WebAssembly module is about 10 MB and compiles on first load. */
export const OPENCV_LOAD_TIMEOUT_MS = 120_000;

interface EmscriptenModule {
  then?: (cb: (m: unknown) => void) => unknown;
  onRuntimeInitialized?: () => void;
  Mat?: unknown;
}

let loading: Promise<{ cv: OpenCv }> | undefined;

/** Resolves to `{ cv }` once the OpenCV runtime is ready (cached per process). */
export function loadOpenCv(timeoutMs = OPENCV_LOAD_TIMEOUT_MS): Promise<{ cv: OpenCv }> {
  loading ??= (async () => {
    const imported = createRequire(import.meta.url)('@techstark/opencv-js') as { default?: unknown };
    const mod = (imported.default ?? imported) as EmscriptenModule | Promise<unknown>;
    if (mod instanceof Promise) {
      // Some builds export a promise of the module; unwrap it without awaiting a thenable module.
      const inner = await mod.then((m) => ({ m }));
      return { cv: inner.m as OpenCv };
    }
    await new Promise<void>((resolve, reject) => {
      const timer = setTimeout(() => reject(new Error(`OpenCV runtime not ready after ${timeoutMs} ms`)), timeoutMs);
      const done = (): void => {
        clearTimeout(timer);
        resolve();
      };
      if (typeof mod.then === 'function') {
        mod.then(() => done());
      } else if (mod.Mat !== undefined) {
        done();
      } else {
        const previous = mod.onRuntimeInitialized;
        mod.onRuntimeInitialized = () => {
          previous?.();
          done();
        };
      }
    });
    return { cv: mod as unknown as OpenCv };
  })();
  return loading;
}
