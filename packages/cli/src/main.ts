import { isInputError } from "@nightshift/core";
import "./commands-list.js";
import { runCli } from "./commands.js";

runCli(process.argv.slice(2)).then(
  (code) => {
    process.exitCode = code;
  },
  (error: unknown) => {
    if (isInputError(error)) {
      console.error(`nightshift: ${error.message}`);
      process.exitCode = 2;
    } else {
      console.error(error);
      process.exitCode = 1;
    }
  },
);
