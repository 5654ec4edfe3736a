declare module 'bunny' {
  const bunny: { positions: [number, number, number][]; cells: [number, number, number][] };
  export default bunny;
}
