declare module 'autocannon';
