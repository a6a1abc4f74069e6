// Per-subscription circuit breaker and in-flight limit of the webhook dispatcher.
namespace FusionService.Alerts;

/// <summary>
/// One circuit per webhook subscription, in this process's memory. After <c>failuresToOpen</c> consecutive failed
/// attempts the circuit opens: no attempt is made for <c>openFor</c>; then it is half-open and lets one trial through
/// (success closes it, failure opens it again). A closed circuit lets at most <c>maxInFlight</c> attempts run at once,
/// so one slow receiver never holds every delivery slot. Thread-safe.
/// </summary>
public sealed class WebhookCircuitBreaker(int failuresToOpen, TimeSpan openFor, int maxInFlight, TimeProvider time)
{
    private readonly Dictionary<Guid, Circuit> _circuits = [];
    private readonly Lock _gate = new();

    /// <summary>Subscriptions that cannot start an attempt now (open circuit, or no free in-flight slot).</summary>
    public IReadOnlyCollection<Guid> Blocked()
    {
        var now = time.GetUtcNow();
        lock (_gate)
        {
            return [.. _circuits.Where(pair => !CanStart(pair.Value, now)).Select(pair => pair.Key)];
        }
    }

    /// <summary>Whether the circuit of <paramref name="webhookId"/> is open now (half-open counts as not open).</summary>
    public bool IsOpen(Guid webhookId)
    {
        lock (_gate)
        {
            return _circuits.TryGetValue(webhookId, out var c) && c.OpenUntil > time.GetUtcNow();
        }
    }

    /// <summary>Starts an attempt on <paramref name="webhookId"/>; false (nothing started) when the circuit does not allow one now.</summary>
    public bool TryStart(Guid webhookId)
    {
        var now = time.GetUtcNow();
        lock (_gate)
        {
            if (!_circuits.TryGetValue(webhookId, out var c))
            {
                c = new Circuit();
                _circuits[webhookId] = c;
            }

            if (!CanStart(c, now))
            {
                return false;
            }

            c.InFlight++;
            return true;
        }
    }

    /// <summary>Ends an attempt started by <see cref="TryStart"/>, recording whether it succeeded.</summary>
    public void Finish(Guid webhookId, bool succeeded)
    {
        var now = time.GetUtcNow();
        lock (_gate)
        {
            if (!_circuits.TryGetValue(webhookId, out var c))
            {
                return;
            }

            c.InFlight = Math.Max(0, c.InFlight - 1);
            if (succeeded)
            {
                c.ConsecutiveFailures = 0;
                c.OpenUntil = DateTimeOffset.MinValue;
            }
            else if (++c.ConsecutiveFailures >= failuresToOpen)
            {
                c.OpenUntil = now + openFor;
            }

            if (c.InFlight == 0 && c.ConsecutiveFailures == 0)
            {
                _circuits.Remove(webhookId);
            }
        }
    }

    private bool CanStart(Circuit c, DateTimeOffset now)
    {
        if (c.OpenUntil > now)
        {
            return false;
        }

        // Half-open (failures at the threshold, open time over): a single trial at a time.
        int limit = c.ConsecutiveFailures >= failuresToOpen ? 1 : maxInFlight;
        return c.InFlight < limit;
    }

    private sealed class Circuit
    {
        public int InFlight { get; set; }

        public int ConsecutiveFailures { get; set; }

        public DateTimeOffset OpenUntil { get; set; } = DateTimeOffset.MinValue;
    }
}
