// @ts-check
import { defineConfig } from 'astro/config';
import node from '@astrojs/node';
import react from '@astrojs/react';
import tailwindcss from '@tailwindcss/vite';

const port = process.env.PORT ?? '4321';

export default defineConfig({
  output: 'server',
  // Middleware mode: src/server/http.ts owns the Node HTTP server so it can answer WebSocket
  // upgrades on /api/v1/live, which Astro endpoints never see.
  adapter: node({ mode: 'middleware' }),
  integrations: [react()],
  server: { host: process.env.HOST ?? '127.0.0.1', port: Number(port) },
  security: {
    // Off: src/middleware.ts checks origins itself, since Astro's check runs before any middleware
    // and would refuse Bearer-token scripts posting forms or bodies without a JSON content type.
    checkOrigin: false,
    // Without these, Astro treats every request as http://localhost (its URL's origin is what the
    // middleware compares a request's Origin with), so form posts would get 403.
    allowedDomains: [{ hostname: '127.0.0.1' }, { hostname: 'localhost' }, ...(process.env.PUBLIC_HOSTNAME ? [{ hostname: process.env.PUBLIC_HOSTNAME }] : [])],
  },
  vite: {
    plugins: [tailwindcss()],
    ssr: { external: ['@node-rs/argon2', 'pg', 'aedes', 'ws', 'mqtt', 'nodemailer', 'smtp-server'] },
  },
  devToolbar: { enabled: false },
});
