export * from "./board.js";
export * from "./corrected-t-test.js";
export * from "./leaderboard.js";
export * from "./student-t.js";
export * from "./ensembles/index.js";
