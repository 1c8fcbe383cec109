/**
 * A read-only array whose elements are made on first read: a library of 100 000 references loads
 * as one list, and a match makes the few hundred it looks at. It behaves as an array for reading
 * (index, length, iteration, map/find/filter, JSON); writing to it is refused.
 */
export function lazyList<T>(length: number, make: (i: number) => T): readonly T[] {
  const made: T[] = new Array<T>(length);
  const at = (i: number): T => (i in made ? made[i]! : (made[i] = make(i)));
  return new Proxy(made, {
    get(target, key, receiver) {
      const i = indexOf(key, length);
      return i >= 0 ? at(i) : Reflect.get(target, key, receiver);
    },
    // Array methods skip holes by asking `in`: every position up to length holds an element.
    has(target, key) {
      return indexOf(key, length) >= 0 || Reflect.has(target, key);
    },
    getOwnPropertyDescriptor(target, key) {
      const i = indexOf(key, length);
      if (i >= 0) at(i);
      return Reflect.getOwnPropertyDescriptor(target, key);
    },
    ownKeys(target) {
      for (let i = 0; i < length; i++) at(i);
      return Reflect.ownKeys(target);
    },
    set: refuse,
    defineProperty: refuse,
    deleteProperty: refuse,
  });
}

function refuse(): never {
  throw new TypeError('a lazily loaded list is read-only');
}

/** The array index a property key names (below length), else −1. */
function indexOf(key: string | symbol, length: number): number {
  if (typeof key !== 'string' || key.length === 0 || key.length > 10) return -1;
  const first = key.charCodeAt(0);
  if (first < 48 || first > 57 || (first === 48 && key.length > 1)) return -1;
  let i = 0;
  for (let k = 0; k < key.length; k++) {
    const c = key.charCodeAt(k);
    if (c < 48 || c > 57) return -1;
    i = 10 * i + (c - 48);
  }
  return i < length ? i : -1;
}
