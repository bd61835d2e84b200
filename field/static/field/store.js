/* What the phone keeps, in IndexedDB: the sign-in and the technician's choices ("kv"), and
   the records waiting to be sent ("outbox", by client_id, in the order they were made).
   Signing out or a refused token clears it all. */

const DB_NAME = "rimewatch-field";
const DB_VERSION = 1;
let opening = null;

function open() {
  if (!opening) {
    opening = new Promise((resolve, reject) => {
      const request = indexedDB.open(DB_NAME, DB_VERSION);
      request.onupgradeneeded = () => {
        const db = request.result;
        db.createObjectStore("kv");
        const outbox = db.createObjectStore("outbox", { keyPath: "client_id" });
        outbox.createIndex("made", "made");
      };
      request.onsuccess = () => resolve(request.result);
      request.onerror = () => reject(request.error);
    });
  }
  return opening;
}

async function run(store, mode, work) {
  const db = await open();
  return new Promise((resolve, reject) => {
    const tx = db.transaction(store, mode);
    const request = work(tx.objectStore(store));
    tx.oncomplete = () => resolve(request ? request.result : undefined);
    tx.onerror = () => reject(tx.error);
    tx.onabort = () => reject(tx.error);
  });
}

export const kvGet = (key) => run("kv", "readonly", (s) => s.get(key));
export const kvSet = (key, value) => run("kv", "readwrite", (s) => s.put(value, key));

export const outboxAll = () => run("outbox", "readonly", (s) => s.index("made").getAll());
export const outboxPut = (entry) => run("outbox", "readwrite", (s) => s.put(entry));
export const outboxDelete = (clientId) => run("outbox", "readwrite", (s) => s.delete(clientId));

/* Forget everything the phone holds: sign-in, choices, unsent records, kept API answers. */
export async function forgetAll() {
  await run("kv", "readwrite", (s) => s.clear());
  await run("outbox", "readwrite", (s) => s.clear());
  if (self.caches) await caches.delete("rimewatch-field-api");
}
