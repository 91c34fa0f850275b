export { logGamma, regularizedIncompleteBeta, studentTCdf, studentTSurvival } from "./student-t.js";
export { type PairedTestResult, correctedPairedTTest, tiesWithBest } from "./corrected-t-test.js";
