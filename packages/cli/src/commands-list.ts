import { registerVerb } from "./commands.js";
import { boardVerb } from "./verbs/board.js";
import { demoVerb } from "./verbs/demo.js";
import { initVerb } from "./verbs/init.js";
import { runVerb } from "./verbs/run.js";
import { workerVerb } from "./verbs/worker.js";

for (const verb of [demoVerb, initVerb, runVerb, workerVerb, boardVerb]) registerVerb(verb);
import { predictVerb } from "./verbs/predict.js"; registerVerb(predictVerb);
