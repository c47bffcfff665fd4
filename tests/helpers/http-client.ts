// A tiny browser stand-in for HTTP tests: keeps cookies, sends the Origin header that our same-origin
// check expects, and never follows redirects so tests can assert them.

export interface Page {
  status: number;
  headers: Headers;
  text: string;
  location: string | null;
}

export class HttpClient {
  readonly cookies = new Map<string, string>();

  constructor(readonly base: string) {}

  private cookieHeader(): string {
    return [...this.cookies].map(([k, v]) => `${k}=${v}`).join('; ');
  }

  private keepCookies(res: Response): void {
    for (const line of res.headers.getSetCookie()) {
      const [pair] = line.split(';');
      const eq = pair!.indexOf('=');
      const name = pair!.slice(0, eq).trim();
      const value = pair!.slice(eq + 1).trim();
      if (value === '' || /max-age=0/i.test(line)) this.cookies.delete(name);
      else this.cookies.set(name, value);
    }
  }

  async request(path: string, init: RequestInit = {}): Promise<Page> {
    const headers = new Headers(init.headers);
    if (this.cookies.size && !headers.has('cookie')) headers.set('cookie', this.cookieHeader());
    if (init.method && init.method !== 'GET' && !headers.has('origin')) headers.set('origin', new URL(this.base).origin);
    const res = await fetch(new URL(path, this.base), { ...init, headers, redirect: 'manual' });
    this.keepCookies(res);
    return { status: res.status, headers: res.headers, text: await res.text(), location: res.headers.get('location') };
  }

  async get(path: string, headers: Record<string, string> = {}): Promise<Page> {
    return await this.request(path, { headers });
  }

  async postForm(path: string, fields: Record<string, string>, headers: Record<string, string> = {}): Promise<Page> {
    return await this.request(path, {
      method: 'POST',
      headers: { 'content-type': 'application/x-www-form-urlencoded', ...headers },
      body: new URLSearchParams(fields).toString(),
    });
  }

  async signIn(email: string, password: string): Promise<Page> {
    return await this.postForm('/signin', { email, password });
  }
}

/** The first `<input … value="…">` with the given id, as the browser would show it. */
export function inputValue(html: string, id: string): string | null {
  const tag = new RegExp(`<input[^>]*id="${id}"[^>]*>`).exec(html)?.[0];
  return tag ? (/value="([^"]*)"/.exec(tag)?.[1] ?? null) : null;
}
