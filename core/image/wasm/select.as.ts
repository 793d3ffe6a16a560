// The k-th smallest of buf[0..n), reordering buf (Hoare quickselect, the same steps as
// selectKth in ../stats.ts): shared by the AssemblyScript kernels that import it.
@inline export function selectKth(buf: StaticArray<f32>, n: i32, k: i32): f64 {
  let lo = 0;
  let hi = n - 1;
  while (lo < hi) {
    const pivot = unchecked(buf[(lo + hi) >> 1]);
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (unchecked(buf[i]) < pivot) i++;
      while (unchecked(buf[j]) > pivot) j--;
      if (i <= j) {
        const t = unchecked(buf[i]); unchecked(buf[i] = unchecked(buf[j])); unchecked(buf[j] = t);
        i++; j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return <f64>unchecked(buf[k]);
  }
  return <f64>unchecked(buf[k]);
}
