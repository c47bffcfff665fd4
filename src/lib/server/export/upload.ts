// The request side of an upload: refuses an announced oversize body before reading a byte (413);
// the import counts bytes as it reads too, for bodies sent without a Content-Length.
//
// A body must be read to its end before the answer, or the connection cannot carry the next
// request: Node leaves the unread rest of a body that was being read on the socket, and the
// browser's next "Check file" waited behind it until the keep-alive timeout closed the connection.
// Closing instead is no cure for a browser: Chromium sends the whole body before it reads the
// answer, and an answer cut off mid-upload reaches the page as "Failed to fetch". So the rest of
// a body the handler stopped reading early (20 problems, a JSON export) is read and dropped, up to
// the upload cap; a body past the cap, or refused before it was read, is answered with
// `Connection: close`, the server reading and dropping the rest a while before it closes so the
// client reads the answer, not a reset (src/server/http.ts; the upload island never sends one past the cap).
import { HttpError, problem } from '../http/responses.ts';
import { MAX_IMPORT_BYTES } from '../../import-shapes.ts';
import { mib } from './import.ts';

function uploadBody(request: Request, maxBytes: number): ReadableStream<Uint8Array> {
  const declared = Number(request.headers.get('content-length') ?? NaN);
  if (Number.isFinite(declared) && declared > maxBytes) throw new HttpError(413, `the file is larger than ${mib(maxBytes)}`);
  const type = request.headers.get('content-type') ?? '';
  if (type && !/^(text\/csv|text\/plain|application\/octet-stream)/i.test(type)) throw new HttpError(415, 'send the CSV itself as the body (Content-Type: text/csv)');
  if (!request.body) throw new HttpError(400, 'the body is empty');
  return request.body;
}

/** The body as the handler reads it, and what is left of it read to the end afterwards. */
function tracked(body: ReadableStream<Uint8Array>) {
  const reader = body.getReader();
  let bytes = 0;
  let ended = false;
  const next = async () => {
    const r = await reader.read();
    if (r.done) ended = true;
    else bytes += r.value.byteLength;
    return r;
  };
  const stream = new ReadableStream<Uint8Array>(
    {
      async pull(controller) {
        const r = await next();
        if (r.done) controller.close();
        else controller.enqueue(r.value);
      },
      // The handler stopping early leaves the rest to drain(): cancelling the request's body
      // would leave its bytes on the connection.
      cancel: () => undefined,
    },
    // Read only when the handler asks, so nothing is in flight when it stops.
    { highWaterMark: 0 },
  );
  /** Reads the rest, dropping it, while the total stays within `limit` bytes; true once at the end. */
  const drain = async (limit: number): Promise<boolean> => {
    while (!ended) {
      if (bytes > limit) {
        await reader.cancel().catch(() => undefined);
        return false;
      }
      await next();
    }
    return true;
  };
  return { stream, drain };
}

/**
 * Hands the request's upload to `handle`; an HttpError it throws becomes its answer. The body is
 * read to its end before the answer goes, within the upload cap; past it the connection closes.
 */
export async function withUpload(request: Request, handle: (body: ReadableStream<Uint8Array>) => Promise<Response>, maxBytes = MAX_IMPORT_BYTES): Promise<Response> {
  let body: ReturnType<typeof tracked> | null = null;
  let res: Response;
  try {
    body = tracked(uploadBody(request, maxBytes));
    res = await handle(body.stream);
  } catch (err) {
    if (!(err instanceof HttpError)) throw err;
    res = problem(err.status, err.message);
  }
  if (!(await body?.drain(maxBytes))) res.headers.set('connection', 'close');
  return res;
}
