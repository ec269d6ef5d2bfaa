/** Tests load opencv.js through the project's loader (see src/vision/loadOpenCv.ts). */
export { loadOpenCv } from '../../src/vision/loadOpenCv.ts';
