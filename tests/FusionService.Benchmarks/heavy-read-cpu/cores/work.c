// Fixed work, timed (cores.sh): "alu" (integer mixing in registers) or a chase of dependent loads over a shuffled ring: "l2" 1 MiB, "l3s" 4 MiB, "l3" 8 MiB, "mem" 64 MiB. A third argument repeats it forever, untimed.
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <stdint.h>
#include <time.h>
static double now(void){struct timespec t;clock_gettime(CLOCK_MONOTONIC,&t);return t.tv_sec+t.tv_nsec*1e-9;}
int main(int argc,char**argv){
  const char*kind=argv[1]; long iters=atol(argv[2]); int forever=argc>3;
  size_t n = strcmp(kind,"l2")==0 ? (1u<<20)/8 : strcmp(kind,"l3")==0 ? (8u<<20)/8 : strcmp(kind,"l3s")==0 ? (4u<<20)/8 : (64u<<20)/8;
  uint64_t *ring=NULL;
  if(strcmp(kind,"alu")!=0){ ring=malloc(n*8); for(size_t i=0;i<n;i++) ring[i]=i;
    uint64_t s=88172645463325252ull; for(size_t i=n-1;i>0;i--){ s^=s<<13;s^=s>>7;s^=s<<17; size_t j=s%(i+1); uint64_t t=ring[i];ring[i]=ring[j];ring[j]=t; } }
  do{
    double t0=now(); uint64_t x=1,acc=0;
    if(ring==NULL){ for(long i=0;i<iters;i++){ x^=x<<13;x^=x>>7;x^=x<<17; acc+=x*2654435761u; } }
    else { uint64_t p=0; for(long i=0;i<iters;i++){ p=ring[p]; acc+=p; } }
    if(!forever) printf("%s %.3f s (%lu)\n",kind,now()-t0,(unsigned long)(acc&1));
  }while(forever);
  return 0;
}
