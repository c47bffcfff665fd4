// The request side of an upload: refuses an announced oversize body before reading a byte (413);
// the import counts bytes as it reads too, for bodies sent without a Content-Length.
import { HttpError } from '../http/responses.ts';
import { MAX_IMPORT_BYTES } from '../../import-shapes.ts';
import { mib } from './import.ts';

export function uploadBody(request: Request, maxBytes = MAX_IMPORT_BYTES): ReadableStream<Uint8Array> {
  const declared = Number(request.headers.get('content-length') ?? NaN);
  if (Number.isFinite(declared) && declared > maxBytes) throw new HttpError(413, `the file is larger than ${mib(maxBytes)}`);
  const type = request.headers.get('content-type') ?? '';
  if (type && !/^(text\/csv|text\/plain|application\/octet-stream)/i.test(type)) throw new HttpError(415, 'send the CSV itself as the body (Content-Type: text/csv)');
  if (!request.body) throw new HttpError(400, 'the body is empty');
  return request.body;
}
