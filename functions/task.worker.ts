/**
 * A task worker of the add-in's pool (functions/taskPool.ts): started by the fit worker, it
 * answers one fit's tasks at a time (engine/parallel.ts createTaskHost with fit.ts's
 * openTaskContext and runFitTask): protocol in engine/parallel.ts.
 */
import { openTaskContext, runFitTask } from "../engine/fit";
import { createTaskHost, FromTaskWorker, ToTaskWorker } from "../engine/parallel";

interface TaskWorkerScope {
  postMessage(message: FromTaskWorker, transfer: Transferable[]): void;
  onmessage: ((event: { data: ToTaskWorker }) => void) | null;
}

// Only inside a dedicated worker (WorkerGlobalScope exists there and nowhere else).
const scope = globalThis as unknown as TaskWorkerScope & { WorkerGlobalScope?: new () => unknown };
if (typeof scope.WorkerGlobalScope === "function" && scope instanceof scope.WorkerGlobalScope) {
  const handle = createTaskHost((message) => scope.postMessage(message, []), openTaskContext, runFitTask);
  scope.onmessage = (event) => handle(event.data);
}
