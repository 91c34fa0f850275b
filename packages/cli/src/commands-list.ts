import { registerVerb } from "./commands.js";
import { boardVerb } from "./verbs/board.js";
import { demoVerb } from "./verbs/demo.js";
import { initVerb } from "./verbs/init.js";
import { predictVerb } from "./verbs/predict.js";
import { reportVerb } from "./verbs/report.js";
import { runVerb } from "./verbs/run.js";
import { serveVerb } from "./verbs/serve.js";
import { workerVerb } from "./verbs/worker.js";

for (const verb of [demoVerb, initVerb, runVerb, workerVerb, boardVerb, serveVerb, predictVerb, reportVerb]) registerVerb(verb);
