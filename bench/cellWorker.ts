/**
 * The add-in's fit worker (functions/fit.worker.ts, its message protocol and handler unchanged)
 * on a Node worker_threads port, for the bench's cell-path cases. Started by bench/cellPath.ts.
 */
import { parentPort } from "worker_threads";
import { createFitHandler, ToWorker } from "../functions/fit.worker";

if (parentPort) {
  const port = parentPort;
  const handle = createFitHandler((message) => port.postMessage(message));
  port.on("message", (message: ToWorker) => handle(message));
}
