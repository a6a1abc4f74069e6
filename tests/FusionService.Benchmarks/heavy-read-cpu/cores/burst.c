// Bursts (cores.sh): every 2 ms wake, then walk KB kilobytes PASSES times; prints wake-up delay and burst time percentiles.
// Arguments: KB PASSES N (bursts); the wake-up delay is the time past the 2 ms.
#include <stdio.h>
#include <stdlib.h>
#include <stdint.h>
#include <time.h>
static double now(void){struct timespec t;clock_gettime(CLOCK_MONOTONIC,&t);return t.tv_sec*1e6+t.tv_nsec*1e-3;}
static int cmp(const void*a,const void*b){double x=*(double*)a,y=*(double*)b;return x<y?-1:x>y;}
int main(int argc,char**argv){
  size_t kb=atol(argv[1]); int passes=atoi(argv[2]); int nb=atoi(argv[3]);
  size_t n=kb*1024/8; uint64_t*ring=malloc(n*8); for(size_t i=0;i<n;i++) ring[i]=i;
  uint64_t s=88172645463325252ull; for(size_t i=n-1;i>0;i--){ s^=s<<13;s^=s>>7;s^=s<<17; size_t j=s%(i+1); uint64_t t=ring[i];ring[i]=ring[j];ring[j]=t; }
  double*wake=malloc(nb*sizeof(double)),*dur=malloc(nb*sizeof(double)); uint64_t acc=0;
  for(int b=0;b<nb;b++){
    double t0=now(); struct timespec d={0,2000000}; nanosleep(&d,NULL); double t1=now();
    uint64_t p=0; for(int k=0;k<passes;k++) for(size_t i=0;i<n;i++){ p=ring[p]; acc+=p; }
    double t2=now(); wake[b]=t1-t0-2000; dur[b]=t2-t1;
  }
  qsort(wake,nb,sizeof(double),cmp); qsort(dur,nb,sizeof(double),cmp);
  printf("wake delay us p50 %.0f p99 %.0f max %.0f | burst us p50 %.0f p99 %.0f (%lu)\n",wake[nb/2],wake[nb*99/100],wake[nb-1],dur[nb/2],dur[nb*99/100],(unsigned long)(acc&1));
  return 0;
}
