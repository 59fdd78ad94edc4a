/**
 * The module a batch worker thread of the built command line starts from (an entry of the
 * bundle, see bin/cli-build.mjs): it runs the worker's loop of `stratameter batch`.
 */
import { workerMain } from './batch';

await workerMain();
