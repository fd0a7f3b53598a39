/**
 * A worker_threads task worker (engine/node/threadPool.ts starts it): answers a fit's tasks
 * (parallel.ts createTaskHost) with fit.ts's openTaskContext and runFitTask.
 */
import { parentPort } from "worker_threads";
import { openTaskContext, runFitTask } from "../fit";
import { createTaskHost, ToTaskWorker } from "../parallel";

const port = parentPort;
if (port) {
  const handle = createTaskHost((message) => port.postMessage(message), openTaskContext, runFitTask);
  port.on("message", (message: ToTaskWorker) => handle(message));
}
