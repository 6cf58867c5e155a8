// Loaded first in every analysis child (`--import`, before BullMQ's main.js). BullMQ's child answers
// an uncaught exception by sending it to the parent and awaiting the send (bullmq 5.x
// classes/main-base.js); once the parent is gone the send rejects, the rejection is itself an
// uncaught exception, and the child loops on the microtask queue for ever, burning a core, so even
// its 'disconnect' listener never runs. This listener comes before BullMQ's and ends the child
// when there is no parent left to tell.
const GUARD_SOURCE = "process.on('uncaughtException',()=>{if(!process.connected)process.exit(1)})";

export const CHILD_GUARD_IMPORT = `data:text/javascript,${encodeURIComponent(GUARD_SOURCE)}`;
