// Which failures count as transient database errors.
using FusionService.Storage.Failures;
using Npgsql;

namespace FusionService.Storage.Tests.Failures;

public sealed class TransientDatabaseErrorTests
{
    [Fact]
    public void Driver_state_and_timeout_failures_are_transient_others_are_not()
    {
        Assert.True(TransientDatabaseError.Is(new NpgsqlException("connection lost")));
        Assert.True(TransientDatabaseError.Is(new InvalidOperationException("data source disposed")));
        Assert.True(TransientDatabaseError.Is(new TimeoutException()));
        Assert.False(TransientDatabaseError.Is(new ArgumentException("bad argument")));
        Assert.False(TransientDatabaseError.Is(new NullReferenceException()));
        Assert.False(TransientDatabaseError.Is(new IOException()));
    }
}
