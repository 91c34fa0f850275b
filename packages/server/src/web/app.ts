import { ApiError, h } from "./dom.js";
import { showRunList } from "./run-list.js";
import { showRunPage } from "./run-page.js";
import { showTrialPage } from "./trial-page.js";

/*
 * The dashboard: one page, three views chosen by the location hash
 * (#/ runs, #/runs/<id> a run, #/runs/<id>/trials/<n> a trial).
 */

const root = document.getElementById("view") as HTMLElement;
const liveDot = document.getElementById("live") as HTMLElement;
let leave: () => void = () => undefined;

function setLive(connected: boolean): void {
  liveDot.classList.toggle("on", connected);
  liveDot.title = connected ? "live: updates arrive as the run progresses" : "not following a running run";
}

async function route(): Promise<void> {
  leave();
  leave = () => undefined;
  setLive(false);
  const path = location.hash.replace(/^#/, "") || "/";
  const trialMatch = /^\/runs\/([^/]+)\/trials\/(\d+)$/.exec(path);
  const runMatch = /^\/runs\/([^/]+)$/.exec(path);
  try {
    if (trialMatch) {
      document.title = `trial ${trialMatch[2]} · ${decodeURIComponent(trialMatch[1])} · nightshift`;
      leave = await showTrialPage(root, decodeURIComponent(trialMatch[1]), Number(trialMatch[2]));
    } else if (runMatch) {
      document.title = `${decodeURIComponent(runMatch[1])} · nightshift`;
      leave = await showRunPage(root, decodeURIComponent(runMatch[1]), setLive);
    } else {
      document.title = "runs · nightshift";
      leave = await showRunList(root, setLive);
    }
  } catch (error) {
    const message = error instanceof ApiError ? error.message : String(error);
    root.replaceChildren(h("div", { class: "panel problem" }, h("h2", {}, error instanceof ApiError && error.status === 404 ? "Not found" : "Something went wrong"), h("p", {}, message), h("p", {}, h("a", { href: "#/" }, "back to the runs"))));
  }
}

// A token given once in the address is kept by the server as a cookie; keep it out of the address bar and history.
if (new URLSearchParams(location.search).has("token")) history.replaceState(null, "", location.pathname + location.hash);
window.addEventListener("hashchange", () => void route());
void route();
