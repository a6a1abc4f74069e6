// The per-subscription circuit breaker: opens after consecutive failures, half-opens with one trial, caps in-flight attempts.
using FusionService.Alerts;

namespace FusionService.Tests.Alerts;

public sealed class WebhookCircuitBreakerTests
{
    // The states follow the circuit-breaker pattern as commonly practised (closed, open, half-open); thresholds are ours.
    [Fact]
    public void Issue14_circuit_opens_after_consecutive_failures_and_lets_one_trial_through_after_the_open_time()
    {
        var clock = new ManualClock();
        var breaker = new WebhookCircuitBreaker(failuresToOpen: 3, openFor: TimeSpan.FromSeconds(60), maxInFlight: 4, clock);
        var slow = Guid.NewGuid();
        for (int i = 0; i < 3; i++)
        {
            Assert.True(breaker.TryStart(slow));
            breaker.Finish(slow, succeeded: false);
        }

        Assert.True(breaker.IsOpen(slow));
        Assert.False(breaker.TryStart(slow));
        Assert.Contains(slow, breaker.Blocked());

        clock.Advance(TimeSpan.FromSeconds(61));
        Assert.False(breaker.IsOpen(slow));
        Assert.True(breaker.TryStart(slow));
        Assert.False(breaker.TryStart(slow)); // half-open: a single trial at a time
        breaker.Finish(slow, succeeded: false);
        Assert.True(breaker.IsOpen(slow)); // the trial failed: open again

        clock.Advance(TimeSpan.FromSeconds(61));
        Assert.True(breaker.TryStart(slow));
        breaker.Finish(slow, succeeded: true);
        Assert.DoesNotContain(slow, breaker.Blocked());
        Assert.True(breaker.TryStart(slow) && breaker.TryStart(slow)); // closed again: more than one in flight
    }

    [Fact]
    public void Issue14_one_subscription_holds_at_most_its_in_flight_limit_and_others_are_not_blocked()
    {
        var breaker = new WebhookCircuitBreaker(failuresToOpen: 5, openFor: TimeSpan.FromSeconds(60), maxInFlight: 2, new ManualClock());
        Guid slow = Guid.NewGuid(), fast = Guid.NewGuid();
        Assert.True(breaker.TryStart(slow));
        Assert.True(breaker.TryStart(slow));
        Assert.False(breaker.TryStart(slow));
        Assert.Equal([slow], breaker.Blocked());
        Assert.True(breaker.TryStart(fast));
        breaker.Finish(slow, succeeded: true);
        Assert.True(breaker.TryStart(slow));
    }

    private sealed class ManualClock : TimeProvider
    {
        private DateTimeOffset _now = new(2026, 12, 4, 12, 0, 0, TimeSpan.Zero);

        public override DateTimeOffset GetUtcNow() => _now;

        public void Advance(TimeSpan by) => _now += by;
    }
}
