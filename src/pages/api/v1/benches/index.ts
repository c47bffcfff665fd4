import { endpoint } from '../../../../lib/server/http/endpoint.ts';
import { json } from '../../../../lib/server/http/responses.ts';
import { benchChannels, listBenches } from '../../../../lib/server/benches.ts';

export const GET = endpoint('observer', async () => {
  const rows = await listBenches();
  const out = await Promise.all(
    rows.map(async (b) => ({ id: b.id, name: b.name, wavelengthNm: b.wavelengthNm, description: b.description, channels: await benchChannels(b.id) })),
  );
  return json(out);
});
